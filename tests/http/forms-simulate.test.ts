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
import { SIMULATE_BOUNDS } from '../../server/http/routes/forms.js';
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
  it('the job at one dose is simulate() on the same mixture with the same seed', async () => {
    const dose = 2.5e14; // 2.5e8 per mL: above the B07 threshold of this plan (about 1.5e8 per mL)
    const { job } = await run({ doses: ['2.5e8 1/mL'], dims: 1, points: 64, growthTimes: 8, seed: 7 });
    expect(job.state).toBe('done');
    const got = job.result.doses[0];
    expect(job.result.doses).toHaveLength(1);
    expect(got.dose).toBe(dose);

    const d = plan.inputs.candidates.find((c) => c.id === 'ptj-1um-b07')!;
    const mix = withDose(plan.inputs.base, d, dose, plan.request.dosing ?? 'add');
    const a = analyze(mix);
    expect(a.growthRate).toBeGreaterThan(0);
    const direct = simulate(mix, { dims: 1, points: 64, seed: 7, frames: 200, maxSteps: SIMULATE_BOUNDS.maxSteps[1], duration: 8 / a.growthRate });
    // the summary as it crossed the worker and JSON
    expect(got.summary).toEqual(JSON.parse(JSON.stringify(direct.summary)));
    expect(got.linear.growthRate).toBe(a.growthRate);
    expect(got.linear.composition).toEqual(JSON.parse(JSON.stringify(a.composition)));
    // the kymograph: density ÷ mean − 1 at 4 significant digits, every stored frame (200) at every cell (64)
    const k = got.kymograph;
    expect(k.times).toHaveLength(200);
    expect(k.positions).toHaveLength(64);
    expect(got.frames).toBeNull();
    for (const [m, sp] of mix.species.entries()) {
      for (const f of [0, 57, 199]) {
        const row = direct.frames.data[f]!.subarray(m * 64, (m + 1) * 64);
        for (let i = 0; i < 64; i++) {
          const dev = row[i]! / sp.density - 1;
          // Float32 frames: the departure is known to about 1e-7 of the density
          expect(Math.abs(k.deviation[m][f][i] - dev)).toBeLessThanOrEqual(1e-3 * Math.abs(dev) + 2e-7);
        }
      }
    }
    // something did form: the pattern departs from the uniform state by far more than the seed's 1e-5
    const last = k.deviation[1][199] as number[];
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
  }, 120_000);

  it('2D: at most 12 frames of points × points', async () => {
    const { job } = await run({ doses: ['3e8 1/mL'], dims: 2, points: 16, growthTimes: 1 });
    expect(job.state).toBe('done');
    const f = job.result.doses[0].frames;
    expect(f.times).toHaveLength(12);
    expect(f.deviation[0]).toHaveLength(12);
    expect(f.deviation[0][0]).toHaveLength(256);
    // the starting perturbation (rms 1e-5 of the mean) survives the rounding
    expect(Math.max(...f.deviation[0][0].map(Math.abs))).toBeGreaterThan(1e-6);
    expect(job.result.doses[0].kymograph).toBeNull();
  }, 120_000);

  it('refuses out-of-bounds requests with 400 before any job, and an unknown candidate with 404', async () => {
    const bad = [
      { points: 100 },
      { points: 1024 },
      { dims: 2, points: 128 },
      { dims: 3 },
      { doses: Array.from({ length: 13 }, (_, i) => `${i + 1}e7 1/mL`) },
      { duration: '40 d' },
      { growthTimes: 100 },
      { growthTimes: 5, duration: '1 h' },
      { doses: ['1e20 1/mL'] },
      { seed: -1 },
    ];
    for (const body of bad) {
      const r = await run(body);
      expect(r.status, JSON.stringify(body)).toBe(400);
      expect(r.body.message).toBeTruthy();
    }
    expect((await run({}, 'no-such-species')).status).toBe(404);
  });
});
