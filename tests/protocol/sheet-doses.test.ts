/**
 * Explicit doses on a bench sheet (docs/model.md §11): a candidate that crosses at
 * any dose (threshold 0⁺) has no reference to scale dose factors by, so the sheet
 * asks for `doses` by name, and takes them over the HTTP query, the POST body and
 * `brink sheet --doses`. The case is the demo shelf's self-attracting B07 colloids
 * (α μ < 0) dosed into an inert silica base in an unbounded chamber with no
 * peroxide loss, where λ(k → 0⁺) = −α μ x/D_c > 0 at every x > 0 (docs/model.md §6).
 *
 * Unit arithmetic by hand: 1 particle/mL = 1e6 m⁻³, so "1e6 1/mL" is 1e12 m⁻³
 * and is printed back as 1e6 particles/mL.
 */
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../server/cli.js';
import { buildApp, type App } from '../../server/http/app.js';
import type { Sheet } from '../../server/protocol/sheet.js';
import { seedDemoShelf } from '../../server/shelf/seed.js';
import { openDatabase } from '../../server/store/db.js';
import { planRequest as sharedPlan, postPlan } from '../helpers/plans.js';

// the plan of tests/protocol/sheet.test.ts (washed B09 base, B07 has a stationary threshold), without the band
const planRequest = { ...sharedPlan, uncertainty: undefined };

const anyDosePlan = {
  name: 'silica base, B07 in an unbounded chamber',
  base: [{ id: 'silica-1um-t01', volumeFraction: '0.1 percent' }],
  chemicals: { h2o2: '200 mM' },
  chamber: { walls: 'unbounded' },
  boundary: 'stationary',
  candidates: ['ptj-1um-b07'],
};

let app: App;
let anyId = 0;
let normalId = 0;
let dbPath = '';
beforeAll(async () => {
  dbPath = join(mkdtempSync(join(tmpdir(), 'brink-doses-')), 'd.sqlite');
  const db = openDatabase(dbPath);
  seedDemoShelf(db);
  app = await buildApp({ config: { closeDatabase: true }, db });
  const a = (await postPlan(app, anyDosePlan)).json();
  expect(a.result.candidates[0].threshold.anyDose).toBe(true);
  anyId = a.id;
  normalId = (await postPlan(app, planRequest)).json().id;
});
afterAll(async () => {
  await app.close();
});

const get = (id: number, q = '') => app.inject({ method: 'GET', url: `/api/plans/${id}/sheet?format=json${q}` });
const post = (id: number, body: Record<string, unknown>) => app.inject({ method: 'POST', url: `/api/plans/${id}/sheet?format=json`, payload: body });

describe('an any-dose candidate', () => {
  it('without doses: 400 on the path doses, naming the option and the dose path', async () => {
    const r = await get(anyId);
    expect(r.statusCode).toBe(400);
    const p = r.json().problems;
    expect(p).toHaveLength(1);
    expect(p[0].path).toBe('doses');
    expect(p[0].message).toMatch(/any dose above 0 crosses the boundary \(threshold 0⁺\)/);
    expect(p[0].message).toMatch(/dose path: stationary over/);
    expect(p[0].message).toMatch(/--doses/);
  });

  it('with doses in the query: the series is those doses, 1 × is the largest, and the sheet says so', async () => {
    const r = await get(anyId, `&doses=${encodeURIComponent('1e7 1/mL, 0,1e6 1/mL')}`);
    expect(r.statusCode).toBe(200);
    const s = r.json() as Sheet;
    const series = s.samples.filter((_, i) => s.tubes[i]!.kind === 'series' || s.tubes[i]!.kind === 'no-dopant');
    expect(series.map((x) => x.dose!.value)).toEqual([0, 1e6, 1e7]); // sorted, in particles/mL
    expect(s.prediction.threshold.anyDose).toBe(true);
    expect(s.prediction.referenceFrom).toBe('largest-dose');
    expect(s.prediction.referenceDose).toEqual({ value: 1e7, unit: 'particles/mL' });
    expect(s.prediction.series.from).toBe('doses');
    expect(s.prediction.series.note).toMatch(/largest of them, since any dose crosses/);
    expect(series.map((x) => x.doseFactor)).toEqual([0, 0.1, 1]);
    // the imaging times are defaults, and the sheet says they are
    expect(s.imaging.notes.join(' ')).toMatch(/defaults, not predictions/);
  });

  it('the same doses in the POST body give the same sheet; HTML reads "any dose"', async () => {
    const a = (await get(anyId, `&doses=${encodeURIComponent('0,1e6 1/mL,1e7 1/mL')}`)).json();
    const b = (await post(anyId, { doses: ['0', '1e6 1/mL', '1e7 1/mL'] })).json();
    expect(JSON.stringify(b).replaceAll(b.printedAt, 'DATE')).toBe(JSON.stringify(a).replaceAll(a.printedAt, 'DATE'));
    const html = await app.inject({ method: 'POST', url: `/api/plans/${anyId}/sheet?format=html`, payload: { doses: ['0', '1e6 1/mL'] } });
    expect(html.statusCode).toBe(200);
    expect(html.body).toContain('any dose above 0 (threshold 0⁺)');
    expect(html.body).toContain('the doses given');
  });

  it('refuses: only zero doses, both doses and doseFactors, more than 24 doses, a dose with the wrong dimension', async () => {
    expect((await post(anyId, { doses: ['0'] })).json().problems[0]).toMatchObject({ path: 'doses', message: expect.stringMatching(/at least one dose above 0/) });
    expect((await post(anyId, { doses: ['1e6 1/mL'], doseFactors: [1] })).json().problems[0]).toMatchObject({ path: 'doses', message: 'give doses or doseFactors, not both' });
    const many = Array.from({ length: 25 }, (_, i) => `${i + 1}e5 1/mL`);
    expect((await post(anyId, { doses: many })).statusCode).toBe(400);
    expect((await post(anyId, { doses: many.slice(0, 24) })).statusCode).toBe(200); // 24 is within the bound
    const bad = (await post(anyId, { doses: ['1 mM'] })).json();
    expect(bad.problems[0].path).toBe('doses[0]');
  });

  it('a dose above the plan cap gets dose-above-cap (1.001 × cap), one just below it (0.999 ×) does not', async () => {
    // base 0.1 % silica, maxVolumeFraction 0.11 %: room for φ = 1e-4 of 1 µm spheres, cap = 1e-4/((4/3)π 1e-18 m³) = 2.3873e13 m⁻³ by hand
    const p = (await postPlan(app, { ...anyDosePlan, maxVolumeFraction: 0.0011 })).json();
    const cap = p.result.candidates[0].cap.density as number;
    expect(cap / 2.3873e13).toBeCloseTo(1, 4);
    const warned = async (f: number) => {
      const r = await post(p.id, { doses: ['0', `${(f * cap) / 1e6} 1/mL`] });
      expect(r.statusCode).toBe(200);
      return (r.json() as Sheet).warnings.filter((x) => x.code === 'dose-above-cap').length;
    };
    expect(await warned(1.001)).toBe(1);
    expect(await warned(0.999)).toBe(0);
  });
});

describe('a candidate with a threshold', () => {
  it('explicit doses keep the threshold as 1 ×, and dose factors are dose / threshold', async () => {
    const plan = (await app.inject({ method: 'GET', url: `/api/plans/${normalId}` })).json();
    const x = plan.result.candidates.find((c: { species: string }) => c.species === 'ptj-1um-b07').threshold.density as number;
    const s = (await post(normalId, { doses: ['0', `${x / 1e6} 1/mL`, `${(2 * x) / 1e6} 1/mL`] })).json() as Sheet;
    expect(s.prediction.referenceFrom).toBe('threshold');
    expect(s.prediction.referenceDose.value).toBeCloseTo(x / 1e6, -Math.floor(Math.log10(x / 1e6)) + 3);
    expect(s.samples.filter((_, i) => s.tubes[i]!.kind === 'series' || s.tubes[i]!.kind === 'no-dopant').map((c) => c.doseFactor)).toEqual([0, 1, 2]);
    expect(s.warnings.map((w) => w.code)).not.toContain('dose-above-cap');
  });

  it('without doses, the series note names the default factors', async () => {
    const s = (await get(normalId)).json() as Sheet;
    expect(s.prediction.series.from).toBe('default-factors');
    expect(s.prediction.series.note).toMatch(/default factors 0, 0\.5, 0\.8, 1, 1\.25, 1\.6, 2 × the threshold/);
  });
});

describe('brink sheet --doses', () => {
  it('prints the sheet of an any-dose candidate with the doses given; without them exits 2 naming --doses', async () => {
    let out = '';
    let err = '';
    const io = { out: (t: string) => (out += t), err: (t: string) => (err += t) };
    expect(await main(['sheet', String(anyId), '--db', dbPath, '--format', 'json', '--doses', '0,1e6 1/mL,1e7 1/mL'], io)).toBe(0);
    const s = JSON.parse(out) as Sheet;
    expect(s.tubes.filter((x) => x.kind === 'series' || x.kind === 'no-dopant').map((x) => x.plannedDose!.value)).toEqual([0, 1e6, 1e7]);
    out = '';
    expect(await main(['sheet', String(anyId), '--db', dbPath, '--format', 'json'], io)).toBe(2);
    expect(err).toMatch(/doses: required/);
    expect(err).toMatch(/--doses/);
  });
});
