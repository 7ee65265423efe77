/**
 * POST /api/plans/:id/candidates/:species/simulate — what forms past onset at the doses of a plan's
 * bench sheet. The job's numbers must be those of the engine's simulate() (server/engine/simulate/,
 * whose own checks against outside references — Crank's diffusion decay, analyze()'s growth rate —
 * are in tests/engine/simulate-*.test.ts) called directly on the same mixture with the same seed; the
 * default doses must be the bench sheet's own series; out-of-bounds requests are refused with 400.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { analyze } from '../../server/engine/analyze.js';
import { withDose } from '../../server/engine/planner.js';
import { simulate } from '../../server/engine/simulate/index.js';
import type { Mixture, Species } from '../../server/engine/types.js';
import { decode, SIMULATE_BOUNDS } from '../../server/http/routes/forms.js';
import { freshApp } from '../helpers/app.js';
import { planRequest, postPlan } from '../helpers/plans.js';

let app: App;
let plan: { id: number; inputs: { base: Mixture; candidates: Species[] }; request: { dosing?: 'add' | 'replace' } };

beforeAll(async () => {
  app = await freshApp({ demo: true });
  const r = await postPlan(app, planRequest);
  expect(r.statusCode).toBe(201);
  plan = r.json();
}, 60_000);
afterAll(async () => app?.close());

const ENDED = new Set(['done', 'failed', 'cancelled', 'timed-out']);
async function run(body: unknown, species = 'ptj-1um-b07') {
  const r = await app.inject({ method: 'POST', url: `/api/plans/${plan.id}/candidates/${species}/simulate`, payload: body as object });
  if (r.statusCode !== 202) return { status: r.statusCode, body: r.json() };
  expect(r.headers.location).toBe(`/api/jobs/${r.json().id}`);
  let job = r.json();
  for (let i = 0; !ENDED.has(job.state); i++) {
    if (i > 6000) throw new Error('the job did not end in 2 minutes');
    await new Promise((res) => setTimeout(res, 20));
    job = (await app.inject({ method: 'GET', url: `/api/jobs/${job.id}` })).json();
  }
  return { status: 202, job };
}

describe('simulate at doses of a plan', () => {
  it('the job at one dose is simulate() on the same mixture with the same seed, its kymograph the block means of the frames', async () => {
    const dose = 2.5e14; // 2.5e8 per mL: above the B07 threshold of this plan (about 1.5e8 per mL)
    const { job } = await run({ doses: ['2.5e8 1/mL'], dims: 1, points: 256, growthTimes: 8, seed: 7 });
    expect(job.state).toBe('done');
    const got = job.result.doses[0];
    expect(job.result.doses).toHaveLength(1);
    expect(got.dose).toBe(dose);

    const d = plan.inputs.candidates.find((c) => c.id === 'ptj-1um-b07')!;
    const mix = withDose(plan.inputs.base, d, dose, plan.request.dosing ?? 'add');
    const a = analyze(mix);
    expect(a.growthRate).toBeGreaterThan(0);
    const direct = simulate(mix, { dims: 1, points: 256, seed: 7, frames: 201, maxSteps: SIMULATE_BOUNDS.maxSteps[1], duration: 8 / a.growthRate });
    // the summary as it crossed the worker and JSON (measured on the full grid and all 201 frames)
    expect(got.summary).toEqual(JSON.parse(JSON.stringify(direct.summary)));
    expect(got.linear.growthRate).toBe(a.growthRate); // every species is present at this dose
    expect(got.linear.composition).toEqual(JSON.parse(JSON.stringify(a.composition)));
    // the kymograph: 101 of the 201 stored frames (evenly spaced: every 2nd), 128 positions each the mean of 2 of the 256 cells
    const k = got.kymograph;
    expect(got.frames).toBeNull();
    expect(k.times).toHaveLength(101);
    expect(k.positions).toHaveLength(128);
    expect(k.block).toBe(2);
    expect(k.simulated).toEqual({ points: 256, times: 201 });
    expect(direct.frames.times).toHaveLength(201);
    expect(k.downsampled).toBe('101 of the 201 stored times, evenly spaced; 128 positions, each the mean of 2 of the 256 simulated cells');
    const h = direct.summary.grid.cellSize;
    k.positions.forEach((x: number, p: number) => expect(Math.abs(x - (2 * p + 1) * h)).toBeLessThanOrEqual(5e-4 * x));
    k.times.forEach((t: number, j: number) => expect(Math.abs(t - direct.frames.times[2 * j]!)).toBeLessThanOrEqual(5e-4 * direct.frames.times[2 * j]!));
    const dev = decode(k.deviation);
    for (const [m, sp] of mix.species.entries()) {
      for (let j = 0; j < 101; j++) {
        const scale = k.deviation.scale[m][j];
        const q: number[] = k.deviation.values[m][j];
        // integers in ±999, the largest at the top of the range (scale rounded up to 3 digits: ≥ 999/1.01)
        expect(q.every((v) => Number.isInteger(v) && Math.abs(v) <= 999)).toBe(true);
        expect(Math.max(...q.map(Math.abs))).toBeGreaterThanOrEqual(989);
        const row = direct.frames.data[2 * j]!.subarray(m * 256, (m + 1) * 256);
        let full = 0;
        for (let p = 0; p < 128; p++) {
          const block = (row[2 * p]! + row[2 * p + 1]!) / 2 / sp.density - 1;
          // the block mean of the simulated cells, to within half the frame's scale
          expect(Math.abs(dev[m]![j]![p]! - block)).toBeLessThanOrEqual(0.5 * scale * (1 + 1e-9) + 1e-12);
          full += block / 128;
        }
        // blocks keep the amount: the mean departure shown is that of the full grid, which is ~0 (the run keeps
        // each species' particle number to conservation.maxRelativeError; Float32 frames add ~1e-7)
        const shown = dev[m]![j]!.reduce((x, y) => x + y, 0) / 128;
        expect(Math.abs(shown - full)).toBeLessThanOrEqual(0.5 * scale + 1e-12);
        expect(Math.abs(shown)).toBeLessThanOrEqual(0.5 * scale + direct.summary.conservation.maxRelativeError + 1e-6);
      }
    }
    // the starting perturbation (rms 1e-5 of the mean) keeps its digits: the first frame has its own scale
    expect(k.deviation.scale[1][0]).toBeLessThan(1e-6);
    expect(Math.max(...dev[1]![0]!.map(Math.abs))).toBeGreaterThan(5e-6);
    // something did form: the pattern departs from the uniform state by far more than the seed's 1e-5
    const last = dev[1]![100]!;
    expect(Math.max(...last) - Math.min(...last)).toBeGreaterThan(0.01);
  }, 120_000);

  it('without doses it takes the bench sheet series of the candidate (dose 0 included)', async () => {
    const sheet = (await app.inject({ method: 'GET', url: `/api/plans/${plan.id}/sheet?format=json&candidate=ptj-1um-b07` })).json();
    const planned = sheet.tubes.filter((t: { kind: string }) => t.kind === 'series' || t.kind === 'no-dopant').map((t: { plannedDose: { value: number } }) => t.plannedDose.value * 1e6);
    const { job } = await run({ dims: 1, points: 32, growthTimes: 2 });
    expect(job.state).toBe('done');
    const doses = job.result.doses.map((x: { dose: number }) => x.dose);
    expect(doses).toHaveLength(planned.length);
    doses.forEach((x: number, i: number) => expect(Math.abs(x - planned[i]) / Math.max(planned[i], 1)).toBeLessThan(1e-3));
    expect(doses[0]).toBe(0);
    expect(job.result.series.from).toBe(sheet.prediction.series.from);
    // the stable dose 0 runs as long as the slowest growing dose of the series (2 of its growth times)
    const grow = job.result.doses.filter((x: { linear: { growthRate: number } }) => x.linear.growthRate > 0);
    const longest = Math.max(...grow.map((x: { linear: { growthRate: number } }) => 2 / x.linear.growthRate));
    expect(job.result.doses[0].summary.duration).toBeCloseTo(longest, 3);
  }, 120_000);

  it('a duration given as a time is the duration of every dose', async () => {
    const { job } = await run({ doses: ['0', '2e8 1/mL'], points: 32, duration: '30 min' });
    expect(job.state).toBe('done');
    expect(job.result.durationFrom).toBe('given');
    for (const d of job.result.doses) expect(d.summary.duration).toBe(1800);
    expect(job.result.doses[1].factor).toBeNull();
    // doses given are not the sheet's default series, and the result does not call them so
    expect(job.result.series).toBeNull();
  }, 120_000);

  it('2D: 12 frames of points × points (at most 64 × 64: see shrink below)', async () => {
    const { job } = await run({ doses: ['3e8 1/mL'], dims: 2, points: 32, growthTimes: 1 });
    expect(job.state).toBe('done');
    const f = job.result.doses[0].frames;
    expect(f.times).toHaveLength(12);
    expect(f.points).toBe(32);
    expect(f.block).toBe(1);
    expect(f.simulated).toEqual({ points: 32, times: 12 });
    expect(f.downsampled).toBe('all 12 stored times; all 32 × 32 simulated cells');
    expect(f.cellSize).toBe(job.result.doses[0].summary.grid.cellSize);
    expect(f.deviation.scale[0]).toHaveLength(12);
    expect(f.deviation.values[0]).toHaveLength(12);
    expect(f.deviation.values[0][0]).toHaveLength(1024);
    // the starting perturbation (rms 1e-5 of the mean) survives the rounding
    expect(Math.max(...decode(f.deviation)[0]![0]!.map(Math.abs))).toBeGreaterThan(1e-6);
    expect(job.result.doses[0].kymograph).toBeNull();
  }, 120_000);

  it("chemicals: 'dynamic' runs the dynamic-chemicals model and says so", async () => {
    const { job } = await run({ doses: ['2.5e8 1/mL'], dims: 1, points: 32, growthTimes: 2, chemicals: 'dynamic' });
    expect(job.state).toBe('done');
    expect(job.result.chemicals).toBe('dynamic');
    expect(job.result.doses[0].summary.run.chemicals).toBe('dynamic');
    expect(job.result.doses[0].summary.warnings.map((w: { code: string }) => w.code)).toContain('dynamic-chemicals');
  });

  it('refuses out-of-bounds requests with 400 before any job, and an unknown candidate with 404', async () => {
    const bad = [
      { points: 100 },
      { points: 1024 },
      { dims: 2, points: 128 },
      // the smallest 2D grid is 32 × 32: at 16 × 16 single bright cells read as clusters
      { dims: 2, points: 16 },
      { dims: 2, points: 8 },
      { dims: 3 },
      { doses: Array.from({ length: 13 }, (_, i) => `${i + 1}e7 1/mL`) },
      { duration: '40 d' },
      { growthTimes: 100 },
      { growthTimes: 5, duration: '1 h' },
      { doses: ['1e20 1/mL'] },
      { seed: -1 },
      { chemicals: 'slow' },
    ];
    for (const body of bad) {
      const r = await run(body);
      expect(r.status, JSON.stringify(body)).toBe(400);
      expect(r.body.message).toBeTruthy();
    }
    const small = await run({ dims: 2, points: 16 });
    expect(small.body.problems).toEqual([{ path: 'points', message: 'in 2D give a power of two from 32 to 64 cells per side' }]);
    expect((await run({}, 'no-such-species')).status).toBe(404);
  });
});
