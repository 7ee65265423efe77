/**
 * A plan whose fuel has no concentration: the engine's no-concentration and
 * absent-fuel warnings reach the plan's analyses and the bench sheet, and the
 * absent fuel does not cut the imaging to 0 s (docs/model.md §8, §11).
 */
import { describe, expect, it } from 'vitest';
import type { Sheet } from '../../server/protocol/sheet.js';
import { freshApp } from '../helpers/app.js';
import { postPlan } from '../helpers/plans.js';

describe('a plan without the fuel concentration', () => {
  it('says so in the candidate analysis and on the sheet', async () => {
    const app = await freshApp({ demo: true });
    const plan = await postPlan(app, { name: 'no fuel given', base: [{ id: 'ptj-1um-b09', volumeFraction: '0.1 percent' }], chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' }, boundary: 'stationary', candidates: ['ptj-1um-b07'] });
    expect(plan.statusCode).toBe(201);
    const c = plan.json().result.candidates[0];
    expect(c.feasible).toBe(true);
    const codes = c.atMargin.warnings.map((w: { code: string }) => w.code);
    expect(codes).toEqual(expect.arrayContaining(['no-concentration', 'fuel-runs-out']));
    expect(c.atMargin.checks.fuel.find((f: { chemical: string }) => f.chemical === 'h2o2')).toMatchObject({ lifetime: 0, absent: true });
    const r = await app.inject({ method: 'GET', url: `/api/plans/${plan.json().id}/sheet?format=json` });
    expect(r.statusCode).toBe(200);
    const s = r.json() as Sheet;
    const sc = s.warnings.map((w) => w.code);
    expect(sc).toEqual(expect.arrayContaining(['no-concentration', 'fuel-runs-out']));
    expect(sc).not.toContain('imaging-capped-by-fuel');
    expect(s.imaging.duration.value).toBeGreaterThan(0);
    await app.close();
  });
});
