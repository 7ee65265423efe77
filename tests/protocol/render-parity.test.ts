/**
 * One sheet model, several renderings (docs/model.md §11): HTML and Markdown come from `sections` alone, so
 * every text of every section, block and cell must appear in both, and every table row as a row. Walked on
 * several plans over the demo shelf: a feasible one with a band, an oscillatory one (the swimmer turns
 * oscillatory below its stationary threshold), one whose band lies above the cap (catalase), an any-dose one
 * (explicit doses), and two that cannot be made (a candidate that does not cross; volumes that do not fit).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { escapeHtml, escapeMarkdown } from '../../server/protocol/render.js';
import type { Section } from '../../server/protocol/sections.js';
import { SheetNotFitError, type NotFitSheet, type Sheet } from '../../server/protocol/sheet.js';
import { freshApp } from '../helpers/app.js';
import { planRequest, postPlan } from '../helpers/plans.js';
import { expectParity } from './render-helpers.js';

let app: App;
beforeAll(async () => {
  app = await freshApp({ demo: true });
});
afterAll(async () => {
  await app.close();
});

/** One sheet (or the explanation of one that does not fit) printed at a fixed time, in the three formats the route sends. */
function three(id: number, options: unknown = {}) {
  let sheet: Sheet | NotFitSheet;
  let status = 200;
  try {
    sheet = app.sheets.build(id, options, '2026-12-02T08:00:00.000Z');
  } catch (e) {
    if (!(e instanceof SheetNotFitError)) throw e;
    sheet = e.sheet;
    status = 422;
  }
  return { status, json: JSON.parse(app.sheets.render(sheet, 'json')), html: app.sheets.render(sheet, 'html'), md: app.sheets.render(sheet, 'md') };
}

describe('every text of the model appears in HTML and Markdown', () => {
  it('a feasible plan with a band: sections, blocks, cells, and each table row', async () => {
    const id = (await postPlan(app, planRequest)).json().id;
    const r = three(id);
    expect(r.status).toBe(200);
    const n = expectParity(r.json.sections, r.html, r.md);
    expect(n).toBeGreaterThan(200);
    // the three things the Markdown used to drop: precautionary statements, the oscillation period, mix and start the clock
    expect(r.md).toContain('P280 Wear protective gloves');
    expect(r.md).toMatch(/mix gently and start the clock/);
    // section ids in order, the model's order in both renderings
    const ids = (r.json.sections as Section[]).map((s) => s.id);
    expect(ids.slice(0, 4)).toEqual(['title', 'prediction', 'stocks', 'pipetting']);
    expect(ids).toEqual(expect.arrayContaining(['outcomes', 'observations', 'gas', 'hazards', 'traceability']));
    const titles = (r.json.sections as Section[]).map((s) => s.title);
    const mdHeads = r.md.split('\n').filter((l) => /^##? /.test(l)).map((l) => l.replace(/^##? /, ''));
    expect(mdHeads).toEqual(titles.map(escapeMarkdown));
    expect([...r.html.matchAll(/<h[12]>([^<]*)<\/h[12]>/g)].map((x) => x[1])).toEqual(titles.map(escapeHtml));
  });

  it('an oscillatory candidate (period shown in every rendering) and a band above the dose cap', async () => {
    const id = (await postPlan(app, { ...planRequest, candidates: ['ptj-swim-0.5-s02', 'catalase-e3'], uncertainty: { samples: 20, seed: 5 } })).json().id;
    const swim = three(id, { candidate: 'ptj-swim-0.5-s02' });
    expect(swim.status).toBe(200);
    expectParity(swim.json.sections, swim.html, swim.md);
    const osc = swim.json.outcomes.filter((o: { state: string }) => o.state === 'oscillatory');
    expect(osc.length).toBeGreaterThan(0);
    for (const o of osc) expect(o.oscillationPeriod).not.toBeNull();
    // times and lengths in the unit that reads best (display.ts): s, min or h; µm or mm
    expect(swim.md).toMatch(/\| oscillatory; grows in about [\d.]+ (?:s|min|h); wavelength [\d.]+ (?:µm|mm); period [\d.]+ (?:s|min|h) \|/);
    const cat = three(id, { candidate: 'catalase-e3' });
    expect(cat.status).toBe(200);
    expect(cat.json.prediction.band.p95).toBeNull();
    expectParity(cat.json.sections, cat.html, cat.md);
    expect(cat.md).toContain('above the dose cap');
    // an enzyme's doses and stock in nM, its particles/mL beside them (the pipetting's unit): n / N_A, N_A = 6.02214076e23 /mol (SI 2019)
    const nM = (perMl: number) => Number(((perMl * 1e6) / 6.02214076e23 / 1e-6).toPrecision(4));
    const ref = cat.json.prediction.referenceDose.value as number;
    expect(nM(ref)).toBeGreaterThan(0.001);
    expect(nM(ref)).toBeLessThan(1000);
    expect(cat.md).toContain(`**reference dose (1 ×)**: ${nM(ref)} nM (`);
    const stock = cat.json.stocks.find((x: { id: string }) => x.id === 'catalase-e3').concentration.value as number;
    expect(cat.md).toMatch(new RegExp(`\\| ${nM(stock) >= 1000 ? '[\\d.]+ µM' : `${String(nM(stock)).replace('.', '\\.')} nM`} \\([\\d.]+ × 10[⁰¹²³⁴⁵⁶⁷⁸⁹]+ particles/mL\\) \\|`));
    expect(cat.md).toContain('dose planned and delivered in nM (in brackets: 10');
    // the flags and the dose path word the enzyme's doses the same way (a zero dose too)
    expect(cat.md).toMatch(/first onset [\d.]+ nM \([\d.]+ × 10[⁰¹²³⁴⁵⁶⁷⁸⁹]+ particles\/mL\)/);
    expect(cat.md).toContain('stable over (0 nM (0 particles/mL), ');
    expect(cat.md).not.toMatch(/ mM \(0 particles/);
    // the enzyme's hazards by form (seeds/demo-species-hazards.json, from memory): the powder as a respiratory
    // sensitiser with the dust precautions, in both renderings
    const enzyme = cat.json.hazards.find((h: { chemical: string }) => h.chemical === 'catalase-e3');
    const powder = enzyme.asHandled.find((x: { form: string }) => x.form === 'powder');
    expect(powder.classification.statements.map((st: { code: string }) => st.code)).toContain('H334');
    for (const text of [cat.md, cat.html]) {
      expect(text).toContain('powder, if you make the stock from it');
      expect(text).toContain('P261 Avoid breathing dust.');
    }
  });

  it('an any-dose candidate with explicit doses', async () => {
    const id = (await postPlan(app, { name: 'silica base, B07 unbounded', base: [{ id: 'silica-1um-t01', volumeFraction: '0.1 percent' }], chemicals: { h2o2: '200 mM' }, chamber: { walls: 'unbounded' }, boundary: 'stationary', candidates: ['ptj-1um-b07'] })).json().id;
    const r = three(id, { doses: ['0', '1e6 1/mL', '1e7 1/mL'] });
    expect(r.status).toBe(200);
    expectParity(r.json.sections, r.html, r.md);
    expect(r.md).toContain('any dose above 0 (threshold 0⁺)');
  });

  it('plans that cannot be made: the explanation has the same parity', async () => {
    const id = (await postPlan(app, planRequest)).json().id;
    const infeasible = three(id, { candidate: 'catb-0.22-l04' });
    expect(infeasible.status).toBe(422);
    expect(infeasible.json.fits).toBe(false);
    expectParity(infeasible.json.sections, infeasible.html, infeasible.md);
    const tight = three(id, { stocks: { 'ptj-1um-b07': { massConcentration: '0.05 mg/mL' } } });
    expect(tight.status).toBe(422);
    expect(tight.json).toMatchObject({ fits: false, code: 'impossible-volumes' });
    expectParity(tight.json.sections, tight.html, tight.md);
  });
});
