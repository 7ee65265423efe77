/**
 * What the sheet expects of each tube and what it leaves blank (docs/model.md §11):
 * - the expected state of each tube is the dose path's state at the dose its rounded volumes deliver, with the
 *   growth time and wavelength of the analysis at that dose; a flag where the dose lies within the 5–95 % band,
 *   and the first-onset warning where the tube turns unstable below the boundary asked for;
 * - blank observations per tube lid, the same empty fields in the JSON;
 * - the gas each tube's fuel can release, against a hand computation (ideal gas at 25 °C);
 * - the model's "sealed" walls never read as advice on any rendering.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { withDose } from '../../server/engine/planner.js';
import type { Mixture, Species } from '../../server/engine/types.js';
import type { App } from '../../server/http/app.js';
import type { Sheet } from '../../server/protocol/sheet.js';
import { freshApp } from '../helpers/app.js';
import { planRequest, postPlan } from '../helpers/plans.js';

let app: App;
let plan: { id: number; inputs: { base: Mixture; candidates: Species[] }; result: { candidates: { species: string; threshold: { density: number }; band: { p05: number; p95: number }; dosePath: { from: number; to: number; state: string }[] }[] } };
let sheet: Sheet;
beforeAll(async () => {
  app = await freshApp({ demo: true });
  plan = (await postPlan(app, planRequest)).json();
  sheet = app.sheets.build(plan.id, {}, '2026-12-02T08:00:00.000Z');
});
afterAll(async () => {
  await app.close();
});

describe('expected outcome per tube', () => {
  it('the state of the dose path at the delivered dose, and the analysis there (not at the planned dose)', () => {
    const cand = plan.result.candidates.find((c) => c.species === 'ptj-1um-b07')!;
    const dopant = plan.inputs.candidates.find((c) => c.id === 'ptj-1um-b07')!;
    const byTube = new Map(sheet.outcomes.map((o) => [o.tube, o]));
    const series = sheet.tubes.filter((t) => t.kind === 'series');
    expect(series.length).toBe(8);
    for (const t of series) {
      const x = t.dose!.value * 1e6; // particles/mL → m⁻³
      const o = byTube.get(t.code)!;
      // the dose path of this plan is stable up to the threshold, stationary above (a stable base, B07 self-attracting)
      expect(o.state).toBe(x <= cand.threshold.density ? 'stable' : 'stationary');
      const iv = cand.dosePath.find((v) => x > v.from && x <= v.to)!;
      expect(o.state).toBe(iv.state);
      if (o.state === 'stationary') {
        // the engine's analysis of the plan's own base at the delivered dose (four figures of the dose, three of the time)
        const a = analyze(withDose(plan.inputs.base, dopant, x, 'add'));
        expect(o.growthTime!.value / a.growthTime!).toBeCloseTo(1, 2);
        expect(o.wavelength!.value).toBeCloseTo(a.fastestMode.wavelength! * 1e3, 2);
      } else expect(o.growthTime).toBeNull();
    }
    // the delivered dose differs from the planned one by the pipette's rounding, and the outcome follows the delivered one
    expect(series.some((t) => t.dose!.value !== t.plannedDose!.value)).toBe(true);
  });

  it('a growing tube whose fuel runs out within one growth time, or a few, says so in its own row (found in a walk-through)', () => {
    const dopant = plan.inputs.candidates.find((c) => c.id === 'ptj-1um-b07')!;
    let checked = 0;
    for (const t of sheet.tubes.filter((x) => x.kind === 'series')) {
      const o = sheet.outcomes.find((q) => q.tube === t.code)!;
      if (o.state === 'stable') continue;
      // the fuel's lifetime c⁰ / |Σ α ρ| from the engine's own check at the delivered dose (docs/model.md §8)
      const a = analyze(withDose(plan.inputs.base, dopant, t.dose!.value * 1e6, 'add'));
      const life = Math.min(...a.checks.fuel.filter((f) => !f.absent).map((f) => f.lifetime));
      const ratio = life / a.growthTime!;
      const said = o.flags.find((f) => /fuel (runs out|lasts only)/.test(f));
      if (ratio < 1) expect(said, t.code).toMatch(/before one growth time/);
      else if (ratio < 3) expect(said, t.code).toMatch(/lasts only about/);
      else expect(said, t.code).toBeUndefined();
      checked++;
    }
    expect(checked).toBeGreaterThan(0);
    // this demo plan has at least one such tube (2390 s of fuel against a 3920 s growth time at D5)
    expect(sheet.outcomes.some((o) => o.flags.some((f) => /before one growth time/.test(f)))).toBe(true);
  });

  it('flags a tube within the band of the threshold, on both sides of each end', () => {
    const cand = plan.result.candidates.find((c) => c.species === 'ptj-1um-b07')!;
    for (const t of sheet.tubes.filter((x) => x.kind === 'series')) {
      const x = t.dose!.value * 1e6;
      const within = x >= cand.band.p05 * (1 + 1e-3) && x <= cand.band.p95 * (1 - 1e-3);
      const outside = x < cand.band.p05 * (1 - 1e-3) || x > cand.band.p95 * (1 + 1e-3);
      const o = sheet.outcomes.find((z) => z.tube === t.code)!;
      if (within) expect(o.withinBand).toBe(true);
      if (outside) expect(o.withinBand).toBe(false);
      expect(o.flags.some((f) => f.startsWith('in the 5–95 % band of the threshold'))).toBe(o.withinBand);
    }
    // the 2 × dose (3.2e8 /mL) lies above the 95 % point (3.0e8 /mL): not flagged; the 1 × dose is
    expect(sheet.outcomes.find((o) => o.tube === 'D8')!.withinBand).toBe(false);
    expect(sheet.outcomes.find((o) => o.tube === 'D4')!.withinBand).toBe(true);
  });

  it('the no-fuel control is expected stable: without fuel nothing drives the activities (docs/model.md §3: J = −k²D)', () => {
    const cf = sheet.outcomes.find((o) => o.tube === 'CF')!;
    expect(cf.state).toBe('stable');
    expect(cf.flags.join(' ')).toMatch(/without the fuel \(fuel-driven activities off\)/);
    // the dopant alone at 1 × with fuel: B07 is self-attracting (demo shelf), so it clusters on its own
    expect(sheet.outcomes.find((o) => o.tube === 'CA')!.state).toBe('stationary');
  });

  it('the first onset below the chosen boundary is flagged on the tubes it concerns (the swimmer turns oscillatory first)', async () => {
    const p = (await postPlan(app, { ...planRequest, candidates: ['ptj-swim-0.5-s02'], uncertainty: { samples: 20, seed: 5 } })).json();
    const c = p.result.candidates[0];
    expect(c.firstOnset.state).toBe('oscillatory');
    const s = app.sheets.build(p.id, {}, '2026-12-02T08:00:00.000Z');
    let seen = 0;
    for (const t of s.tubes.filter((x) => x.kind === 'series')) {
      const x = t.dose!.value * 1e6;
      const o = s.outcomes.find((z) => z.tube === t.code)!;
      const between = x >= c.firstOnset.density && x < c.threshold.density;
      expect(o.earlierInstability).toBe(between);
      if (between) {
        seen++;
        expect(o.state).toBe('oscillatory');
        expect(o.oscillationPeriod).not.toBeNull();
        expect(o.flags.join(' ')).toMatch(/turns oscillatory first \(first onset .* particles\/mL\), below the stationary threshold/);
      }
    }
    expect(seen).toBeGreaterThan(0);
  });
});

describe('observations to fill in', () => {
  it('one blank entry per tube lid in the JSON, blank columns in HTML and Markdown', async () => {
    const lids = sheet.tubes.flatMap((t) => t.tubes);
    expect(lids.length).toBe(11 * 3);
    expect(sheet.observations.map((o) => o.tube)).toEqual(lids);
    for (const o of sheet.observations) expect(o).toEqual({ tube: o.tube, stateSeen: null, onsetTime: null, patternLength: null, notes: null });
    const sec = sheet.sections.find((x) => x.id === 'observations')!;
    const tb = sec.blocks.find((b) => b.kind === 'table')!;
    if (tb.kind !== 'table') throw new Error('no table');
    expect(tb.rows.map((r) => r.code)).toEqual(lids);
    for (const r of tb.rows) expect(r.cells.slice(2)).toEqual([null, null, null, null]);
    const md = app.sheets.render(sheet, 'md');
    expect(md).toContain('| tube | expected | state seen | onset time | pattern length | notes |');
    expect(md).toContain('| D8c | stationary |   |   |   |   |');
    const html = app.sheets.render(sheet, 'html');
    expect(html).toContain('<tr data-tube="D8c"><td>D8c</td><td>stationary</td><td class="fill"></td><td class="fill"></td><td class="fill"></td><td class="fill"></td></tr>');
  });
});

describe('gas per tube', () => {
  // By hand (ideal gas law V = nRT/p, R = 8.314462618 J/(mol K), CODATA; 298.15 K, 101.325 kPa: 24.465 L/mol):
  // 200 mM H₂O₂ × 100 µL = 20 µmol; the demo Pt beads make 1e-16 mol/s O₂ per 2e-16 mol/s H₂O₂ consumed (demo shelf),
  // so 0.5 O₂ per H₂O₂: 10 µmol O₂ = 244.65 µL. The 1.5 mL tube holds 0.1 mL: headspace 1.4 mL, 244.65/1400 = 17.5 %
  // (above the 10 % venting rule, common practice). The 2 mm × 2 mm × 100 µm chamber (0.4 µL) holds 0.4 µL of the
  // sample, whose gas is 0.4/100 × 244.65 = 0.9786 µL: 2.45 × the chamber.
  it('matches the hand computation and asks to vent the tube and the chamber; the no-fuel control has none', () => {
    const g = sheet.gas;
    expect(g.molarVolume).toEqual({ value: 24.47, unit: 'L/mol' });
    expect(g.chamberVolume).toEqual({ value: 0.4, unit: 'µL' });
    expect(g.chamberVolumeFrom).toBe('chamber');
    const rows = g.perTube;
    expect(rows.map((r) => r.tube)).toEqual(['C0', 'D1', 'D2', 'D3', 'D4', 'D5', 'D6', 'D7', 'D8', 'CA']);
    for (const r of rows) {
      // the fuel delivered after rounding is 199.9 mM (pipetting.ts), within 0.1 % of 200 mM
      expect(Math.abs(r.volume.value / 244.65 - 1)).toBeLessThan(1e-3);
      expect(Math.abs(r.fractionOfHeadspace! / 0.17475 - 1)).toBeLessThan(1e-3);
      expect(Math.abs(r.fractionOfChamber! / 2.4465 - 1)).toBeLessThan(1e-3);
      expect(r).toMatchObject({ gas: 'o2', ventTube: true, ventChamber: true, closedWithCatalyst: false });
    }
    const cautions = sheet.sections.find((s) => s.id === 'gas')!.blocks.filter((b) => b.kind === 'caution');
    expect(cautions.length).toBe(1);
    // the ten tubes' figures print the same: one row of the table names them all
    const tb = sheet.sections.find((s) => s.id === 'gas')!.blocks.find((b) => b.kind === 'table')!;
    if (tb.kind !== 'table') throw new Error('no table');
    expect(tb.rows.map((r) => r.cells[0])).toEqual(['C0, D1, D2, D3, D4, D5, D6, D7, D8, CA']);
  });

  it('a closed chamber (closedChamber) gets a prominent caution in every rendering', () => {
    const s = app.sheets.build(plan.id, { closedChamber: true }, '2026-12-02T08:00:00.000Z');
    expect(s.gas.perTube.every((r) => r.closedWithCatalyst)).toBe(true);
    const cautions = s.sections.find((x) => x.id === 'gas')!.blocks.filter((b) => b.kind === 'caution');
    expect(cautions.map((c) => (c.kind === 'caution' ? c.title : ''))).toEqual(['Gas', 'Closed chamber']);
    expect(app.sheets.render(s, 'md')).toMatch(/^> \*\*⚠ Closed chamber\*\* You said the imaging chamber will be closed/m);
    expect(app.sheets.render(s, 'html')).toContain('<div class="caution" role="note"><strong>Closed chamber</strong>');
  });
});

describe('gas options over HTTP', () => {
  it('tubeVolume, chamberVolume and closedChamber in the query string; the operator printed', async () => {
    const r = await app.inject({ method: 'GET', url: `/api/plans/${plan.id}/sheet?format=json&tubeVolume=2%20mL&chamberVolume=10%20uL&closedChamber=true&operator=${encodeURIComponent('A. Tester (invented)')}` });
    expect(r.statusCode).toBe(200);
    const s = r.json() as Sheet;
    expect(s.gas).toMatchObject({ tubeVolume: { value: 2000, unit: 'µL' }, chamberVolume: { value: 10, unit: 'µL' }, chamberVolumeFrom: 'option' });
    // 10 µL of the 100 µL sample in a 10 µL chamber: 244.65 µL × 0.1 / 10 µL = 2.45 × (by hand, as above); headspace 1.9 mL: 12.9 %
    const d4 = s.gas.perTube.find((g) => g.tube === 'D4')!;
    expect(Math.abs(d4.fractionOfChamber! / 2.4465 - 1)).toBeLessThan(1e-3);
    expect(Math.abs(d4.fractionOfHeadspace! / (244.65 / 1900) - 1)).toBeLessThan(1e-3);
    expect(d4.closedWithCatalyst).toBe(true);
    expect(s.sections[0]!.blocks.find((b) => b.kind === 'keyValue')).toMatchObject({ rows: [{ key: 'Operator', value: 'A. Tester (invented)' }, { key: 'Date', value: null }, { key: 'Batch / lot numbers', value: null }] });
  });
});

describe('the model\'s walls are not advice', () => {
  it('"sealed" (a no-flux boundary of the model) appears on no rendering; the walls are worded as the model’s', () => {
    expect(sheet.model.walls).toMatch(/^no-flux boundary \(model\)/);
    // the analysis' gas warning names a "sealed chamber" (engine/checks.ts): reworded on the sheet
    for (const f of ['html', 'md', 'json'] as const) expect(app.sheets.render(sheet, f)).not.toMatch(/\bseal(ed)?\b/i);
  });
});
