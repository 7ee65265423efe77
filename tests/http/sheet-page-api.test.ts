/**
 * The two API additions the Sheet page uses: a volume read by POST /api/units/read (1 µL = 1e-9 m³ by the SI
 * prefixes' definitions), and `notFitStatus=200`, which answers the explanation of a plan that does not fit with
 * status 200 (the body unchanged: fits false, its reasons and fixes) instead of 422.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { freshApp } from '../helpers/app.js';
import { planRequest, postPlan } from '../helpers/plans.js';

let app: App;
let planId = 0;

beforeAll(async () => {
  app = await freshApp({ demo: true });
  const r = await postPlan(app, planRequest);
  expect(r.statusCode).toBe(201);
  planId = (r.json() as { id: number }).id;
}, 120_000);

afterAll(async () => {
  await app?.close();
});

describe('the API the Sheet page uses', () => {
  it('reads a volume with its unit', async () => {
    const r = await app.inject({ method: 'POST', url: '/api/units/read', payload: { value: '200 uL', quantity: 'volume', sign: 'positive' } });
    expect(r.statusCode).toBe(200);
    const b = r.json() as { si: number; siUnit: string; display: string };
    expect(b.si).toBeCloseTo(2e-7, 20);
    expect(b.siUnit).toBe('m^3');
    expect(b.display).toBe('200 µL');
    const bad = await app.inject({ method: 'POST', url: '/api/units/read', payload: { value: '200 mM', quantity: 'volume' } });
    // not readable is an answer, not an error (a page asks on every keystroke)
    expect(bad.statusCode).toBe(200);
    expect(bad.json()).toMatchObject({ ok: false, error: 'unit' });
    expect((bad.json() as { message: string }).message).toMatch(/length\^3/);
    expect(r.json()).toMatchObject({ ok: true });
  });

  it('answers a plan that does not fit with 422, or 200 when asked, with the same explanation', async () => {
    const a = await app.inject({ method: 'POST', url: `/api/plans/${planId}/sheet?format=json`, payload: { sampleVolume: '5 uL' } });
    const b = await app.inject({ method: 'POST', url: `/api/plans/${planId}/sheet?format=json&notFitStatus=200`, payload: { sampleVolume: '5 uL' } });
    expect(a.statusCode).toBe(422);
    expect(b.statusCode).toBe(200);
    const strip = (x: Record<string, unknown>) => ({ ...x, printedAt: null, sections: (x.sections as { id: string }[]).map((s) => s.id) });
    expect(strip(b.json())).toEqual(strip(a.json()));
    expect(b.json()).toMatchObject({ fits: false, code: 'impossible-volumes', options: [{ option: 'sampleVolume' }] });
    const md = await app.inject({ method: 'GET', url: `/api/plans/${planId}/sheet?format=md&sampleVolume=5%20uL&notFitStatus=200` });
    expect(md.statusCode).toBe(200);
    expect(md.body).toMatch(/cannot be made as asked/);
    // a sheet that fits is 200 either way
    const ok = await app.inject({ method: 'GET', url: `/api/plans/${planId}/sheet?format=json&notFitStatus=422` });
    expect(ok.statusCode).toBe(200);
    expect(await app.inject({ method: 'GET', url: `/api/plans/${planId}/sheet?notFitStatus=201` }).then((r) => r.statusCode)).toBe(400);
  });
});
