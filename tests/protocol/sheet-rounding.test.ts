/**
 * Pipette rounding can make two planned doses one at the bench: the sheet says so (docs/model.md §11).
 * The delivered dose is the rounded volume × the stock's density / the sample volume (C1V1 = C2V2).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import type { Sheet } from '../../server/protocol/sheet.js';
import { freshApp } from '../helpers/app.js';
import { planRequest, postPlan } from '../helpers/plans.js';

let app: App;
let planId = 0;
beforeAll(async () => {
  app = await freshApp({ demo: true });
  planId = (await postPlan(app, { ...planRequest, uncertainty: undefined })).json().id;
});
afterAll(async () => {
  await app.close();
});

const sheetAt = async (q: string) => (await app.inject({ method: 'GET', url: `/api/plans/${planId}/sheet?format=json&${q}` })).json() as Sheet;

describe('doses that rounding makes equal', () => {
  it('two doses 0.1 % apart, which the 1 µL steps above 10 µL deliver alike, get a same-delivered-dose warning naming both tubes', async () => {
    const s = await sheetAt(`doses=${encodeURIComponent('0,1.433e8 1/mL,1.434e8 1/mL,2e8 1/mL')}`);
    const series = s.tubes.filter((t) => t.kind === 'series');
    const pairs = series.slice(1).filter((t, i) => t.dose!.value === series[i]!.dose!.value).map((t, i) => [series.indexOf(t) - 1, i]);
    expect(pairs.length).toBe(1); // the case exists (else this test checks nothing)
    const w = s.warnings.filter((x) => x.code === 'same-delivered-dose');
    expect(w.length).toBe(pairs.length);
    const [i] = pairs[0]!;
    expect(w[0]!.message).toContain(`tubes ${series[i!]!.code} and ${series[i! + 1]!.code}`);
  });
  it('the default sheet, whose doses all differ after rounding, has none', async () => {
    const s = await sheetAt('');
    const doses = s.tubes.filter((t) => t.kind === 'series').map((t) => t.dose!.value);
    expect(new Set(doses).size).toBe(doses.length);
    expect(s.warnings.some((x) => x.code === 'same-delivered-dose')).toBe(false);
  });
});
