/**
 * The bench sheet says what it does not know and says each thing once (docs/model.md §8, §11):
 * - a chemical without hazard data is "not classified", never "no hazard" (HTML, Markdown, JSON);
 * - one warning line per (code, chemical or species), only about what this sheet's mixture uses;
 * - a gas made by a constant activity whose fuel is absent is not expected (no bubbles, no saturation time);
 * - default dose factors × the reference above the dose cap are warned, as explicit doses are.
 * Expected values are worked out by hand beside each check.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { CandidateResult } from '../../server/engine/planner.js';
import type { App } from '../../server/http/app.js';
import { NOT_CLASSIFIED } from '../../server/protocol/render.js';
import { chooseSeries, mergeMessages, sheetRequestSchema, sheetWarnings, type Sheet } from '../../server/protocol/sheet.js';
import { freshApp } from '../helpers/app.js';
import { postPlan } from '../helpers/plans.js';

let app: App;
beforeAll(async () => {
  app = await freshApp({ demo: true });
});
afterAll(async () => {
  await app.close();
});

const sheet = (id: number, format: string, candidate: string) => app.inject({ method: 'GET', url: `/api/plans/${id}/sheet?format=${format}&candidate=${candidate}` });

describe('hazards of a chemical the shelf has no hazard data for', () => {
  // Demo shelf: glucose has a stock (18.1 % w/w) but no hazard record; hydrogen peroxide has one, whose bands
  // put H318 on the 30 % stock and nothing on the 0.682 % sample (200 mM · 34.01 g/mol / 997 g/L).
  it('every concentration says "not classified" in JSON, HTML and Markdown; a classified chemical keeps its wording', async () => {
    const plan = (
      await postPlan(app, { name: 'gox', base: [{ id: 'ptj-1um-b09', volumeFraction: '0.1 percent' }], chemicals: { h2o2: '200 mM', glucose: '20 mM' }, chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' }, boundary: 'stationary', candidates: ['ptj-1um-b07', 'goxb-2um-k11'] })
    ).json();
    const r = await sheet(plan.id, 'json', 'ptj-1um-b07');
    expect(r.statusCode).toBe(200);
    const s = r.json() as Sheet;
    const glucose = s.hazards.find((h) => h.chemical === 'glucose')!;
    expect(glucose.version).toBeNull();
    expect(glucose.classified).toBe(false);
    // the stock bottle, the sample, and a working solution where pipetting.ts makes one: every one "not classified"
    expect(glucose.asHandled.length).toBeGreaterThanOrEqual(2);
    for (const a of glucose.asHandled) expect(a.classified).toBe(false);
    for (const a of glucose.asHandled) expect(a.classification.status).toBe('no-data');
    const h2o2 = s.hazards.find((h) => h.chemical === 'h2o2')!;
    expect(h2o2.classified).toBe(true);
    expect(h2o2.asHandled.every((a) => a.classified)).toBe(true);

    // the sheet's hazard table of glucose, in the section model and in both renderings: one "not classified" per row
    const hz = s.sections.find((x) => x.id === 'hazards')!;
    const at = hz.blocks.findIndex((b) => b.kind === 'heading' && b.text === 'D-glucose');
    const rows = (hz.blocks[at + 1] as Extract<(typeof hz.blocks)[number], { kind: 'table' }>).rows;
    expect(rows.map((r) => r.cells[2])).toEqual(glucose.asHandled.map(() => NOT_CLASSIFIED));
    const md = (await sheet(plan.id, 'md', 'ptj-1um-b07')).body;
    const html = (await sheet(plan.id, 'html', 'ptj-1um-b07')).body;
    // ’ and — are not HTML- or Markdown-significant, so both renderings carry the wording verbatim
    const block = (text: string, head: string) => text.split(head).find((x) => x.startsWith('D-glucose'))!;
    for (const [text, head] of [[md, '### '], [html, '<h3>']] as const) {
      expect(block(text, head).split(NOT_CLASSIFIED).length - 1).toBe(glucose.asHandled.length);
      expect(text).not.toMatch(/no hazard statement applies/i);
    }
    // the peroxide in the sample (0.682 %) is below every band of its data: said as such, with the data's version
    expect(md).toMatch(/in the sample \(at most [\d.]+ mM, 0\.68\d % w\/w\) \| — \| below the classification limits of the shelf’s hazard data \(version 1\)/);
  });
});

describe('sheet warnings: one line per code and subject, only this mixture’s', () => {
  it('merges two wordings after their common opening sentence', () => {
    const plan = 'no concentration given for "h2o2": taken as 0.';
    const engine = 'no concentration given for "h2o2": taken as 0. b09 consumes it, so the fuel is absent; give its concentration.';
    expect(mergeMessages(plan, engine)).toBe(engine);
    const a = 'no concentration given for "g": taken as 0. It is the substrate of k11, which then turns nothing over.';
    const b = 'no concentration given for "g": taken as 0. k11 consumes it, so the fuel is absent; give its concentration.';
    // the longer (b, 85 characters against a's 83) first, then what a adds after the shared "taken as 0. "
    expect(mergeMessages(a, b)).toBe(`${b} It is the substrate of k11, which then turns nothing over.`);
  });

  it('keys on (code, chemical or species), drops what this mixture does not use, keeps subjectless warnings by message', () => {
    const out = sheetWarnings(
      [
        { code: 'no-concentration', message: 'x: taken as 0.', chemical: 'x' },
        { code: 'no-concentration', message: 'x: taken as 0. b consumes it.', chemical: 'x' },
        { code: 'no-concentration', message: 'y: taken as 0.', chemical: 'y' },
        { code: 'retired-species', message: 'z is retired', species: 'z' },
        { code: 'sedimentation-not-checked', message: 'b, q not checked', species: ['q', 'b'] },
        { code: 'dose-above-cap', message: 'dose 1' },
        { code: 'dose-above-cap', message: 'dose 2' },
        { code: 'dose-above-cap', message: 'dose 1' },
      ],
      new Set(['b']),
      new Set(['x']),
    );
    expect(out).toEqual([
      { code: 'no-concentration', message: 'x: taken as 0. b consumes it.' },
      { code: 'sedimentation-not-checked', message: 'b, q not checked' },
      { code: 'dose-above-cap', message: 'dose 1' },
      { code: 'dose-above-cap', message: 'dose 2' },
    ]);
  });

  // The plan of tests/protocol/sheet-missing.test.ts with goxb-2um-k11 added: no chemical given at all.
  it('the plan and the analysis both saying no-concentration give one line per chemical; glucose (only goxb’s) is not on B07’s sheet', async () => {
    const plan = (
      await postPlan(app, { name: 'no fuel given', base: [{ id: 'ptj-1um-b09', volumeFraction: '0.1 percent' }], chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' }, boundary: 'stationary', candidates: ['ptj-1um-b07', 'goxb-2um-k11'] })
    ).json();
    expect(plan.result.warnings.filter((w: { code: string }) => w.code === 'no-concentration').length).toBe(3);
    const s = (await sheet(plan.id, 'json', 'ptj-1um-b07')).json() as Sheet;
    const nc = s.warnings.filter((w) => w.code === 'no-concentration');
    // B09 and B07 consume h2o2 and make o2 (demo shelf); neither touches glucose
    expect(nc.length).toBe(2);
    expect(nc.filter((w) => w.message.includes('"h2o2"')).length).toBe(1);
    expect(nc.filter((w) => w.message.includes('"o2"')).length).toBe(1);
    expect(nc.some((w) => w.message.includes('glucose'))).toBe(false);
    // the kept h2o2 line is the more informative one: it names the consumers
    expect(nc.find((w) => w.message.includes('"h2o2"'))!.message).toMatch(/ptj-1um-b09, ptj-1um-b07 consume it/);

    // and the gas: o2 comes from constant activities whose fuel (h2o2) is absent, so none is expected
    expect(s.warnings.map((w) => w.code)).not.toContain('gas-exceeds-solubility');
    expect(s.warnings.map((w) => w.code)).not.toContain('gas-during-imaging');
    expect(s.warnings.find((w) => w.code === 'gas-needs-absent-fuel')!.message).toMatch(/h2o2 is absent, so no o2 is expected/);
    expect(s.imaging.gasSaturation).toBeNull();
    // (the demo shelf names o2 "dissolved oxygen")
    expect(s.imaging.notes.some((n) => /only while their fuel lasts: h2o2 is absent, so no dissolved oxygen is expected/.test(n))).toBe(true);
  });
});

describe('dose factors above the dose cap', () => {
  // Threshold 1e12 m⁻³ (1e6 /mL), no band: the default factors 0, 0.5, 0.8, 1, 1.25, 1.6, 2 give doses up to
  // 1.6e12 and 2e12 m⁻³. With the cap at 1.6e12·1.001 only 2e12 is above it; at 1.6e12·0.999 both are.
  const cand = (cap: number) =>
    ({ species: 'd', feasible: true, threshold: { density: 1e12, volumeFraction: 1e-6, anyDose: false }, band: null, cap: { density: cap, limitedBy: 'volume-fraction' } }) as unknown as CandidateResult;
  const req = sheetRequestSchema.parse({});
  it('warns for each default-factor dose above the cap, on both sides of it', () => {
    const above = (cap: number) => chooseSeries(cand(cap), req).seriesWarnings.filter((w) => w.code === 'dose-above-cap').map((w) => w.message);
    const justAbove = above(1.6e12 * 1.001);
    expect(justAbove.length).toBe(1);
    expect(justAbove[0]).toMatch(/the dose 2 × 10⁶ particles\/mL/);
    const justBelow = above(1.6e12 * 0.999);
    expect(justBelow.length).toBe(2);
    expect(justBelow[0]).toMatch(/the dose 1\.6 × 10⁶ particles\/mL/);
    expect(above(2e12 * 1.001)).toEqual([]);
  });
  it('and for given dose factors', () => {
    const r = chooseSeries(cand(1.5e12), sheetRequestSchema.parse({ doseFactors: [0, 1, 1.4, 1.6] }));
    // 1.4e12 is under the cap 1.5e12; 1.6e12 is over
    expect(r.seriesWarnings.map((w) => w.code)).toEqual(['dose-above-cap']);
    expect(r.seriesWarnings[0]!.message).toMatch(/1\.6 × 10⁶ particles\/mL/);
  });
});
