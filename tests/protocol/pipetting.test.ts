/**
 * The compact pipetting plan (server/protocol/pipetting.ts, docs/model.md §11).
 *
 * Checks: the dilution relation C₁V₁ = C₂V₂ (the amount of solute is conserved
 * on mixing), applied by hand to the rounded volumes beside each expected number;
 * the rounding rule and the working-dilution rule are common practice, no source
 * (dilution.test.ts); the delivered dose is traced back independently through
 * the steps' own transfers. The molarity of 30 % w/w hydrogen peroxide from its
 * density and molar mass (docs/references.md: 1.11 g/mL at 20 °C from memory,
 * M = 34.0147 g/mol from standard atomic weights → ≈ 9.79 mol/L).
 * Component values are inputs (the demo shelf's invented stocks), never answers.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { hazardSetSchema } from '../../server/protocol/hazards.js';
import { pipettingJson, pipettingSections, planBench, tubeList, type BenchPlan, type Component, type SampleSpec } from '../../server/protocol/pipetting.js';
import { sectionTexts } from '../../server/protocol/sections.js';
import { chemicalStock } from '../../server/protocol/sheet.js';
import { chemicalRecordSchema } from '../../server/schema/shelf.js';
import { DomainError } from '../../server/shelf/errors.js';

const UL = 1e-9;
const o = { sampleVolume: 100 * UL, replicates: 3, minVolume: 1 * UL, overage: 0.1, buffer: 'buffer' };
const h2o2Bands = hazardSetSchema.parse(JSON.parse(readFileSync('seeds/demo-hazards.json', 'utf8')).h2o2);
const M_H2O2 = 0.0340147;
const RHO_W = 997.047;

const peroxide = (extra: Partial<Component> = {}): Component => ({ id: 'fuel', label: 'peroxide', stock: 9790, stockText: '30 %', per: 'mol', molarMass: M_H2O2, stockMassFraction: 0.3, hazards: h2o2Bands, ...extra });

/** The demo sheet's shape: base B at 1.92e14 m⁻³, dopant doses f × 1.594e14 m⁻³, fuel 200 mM; stocks 1.194e15 m⁻³ (1 % w/v of 1 µm beads). */
const FACTORS = [0, 0.4929, 0.5, 0.8, 1, 1.25, 1.6, 1.882, 2];
const REF = 1.594e14;
function demo(fuel: Partial<Component> = {}): { comps: Component[]; samples: SampleSpec[] } {
  const comps: Component[] = [
    { id: 'base', label: 'base beads', stock: 1.194e15, stockText: '1 % w/v', per: 'particles' },
    { id: 'dop', label: 'dopant', stock: 1.194e15, stockText: '1 % w/v', per: 'particles' },
    peroxide(fuel),
  ];
  const samples: SampleSpec[] = FACTORS.map((f) => ({ name: f === 0 ? 'dose 0' : `dose ${f} ×`, role: f === 0 ? 'control' : 'series', dose: f * REF, conc: new Map([['base', 1.92e14], ['dop', f * REF], ['fuel', 200]]), usesMasterMix: true }));
  samples.push({ name: 'no fuel', role: 'control', dose: REF, conc: new Map([['base', 1.92e14], ['dop', REF]]), usesMasterMix: true });
  samples.push({ name: 'dopant alone', role: 'control', dose: REF, conc: new Map([['dop', REF], ['fuel', 200]]), usesMasterMix: false });
  return { comps, samples };
}

/** Concentrations in each tube traced from the stocks through every step's own transfers (C₁V₁ = C₂V₂), not from the plan's contents. */
function traced(plan: BenchPlan): Map<string, Map<string, number>> {
  const conc = new Map<string, Map<string, number>>();
  for (const c of plan.components) conc.set(`stock\u0000${c.id}`, new Map([[c.id, c.stock]]));
  conc.set('buffer', new Map());
  const keyOf = new Map(plan.liquids.map((l) => [l.label, l.key]));
  for (const p of plan.preparations) {
    const total = p.transfers.reduce((a, t) => a + t.volume, 0);
    const out = new Map<string, number>();
    for (const t of p.transfers) for (const [k, v] of conc.get(t.from)!) out.set(k, (out.get(k) ?? 0) + (v * t.volume) / total);
    const key = plan.liquids.find((l) => l.code === p.code)?.key ?? keyOf.get(p.label)!;
    conc.set(key, out);
  }
  const result = new Map<string, Map<string, number>>();
  for (const t of plan.tubes) {
    const total = t.volumes.reduce((a, v) => a + v, 0);
    expect(Math.abs(total - plan.sampleVolume)).toBeLessThan(1e-6 * plan.sampleVolume * 1e-6);
    const out = new Map<string, number>();
    plan.columns.forEach((c, i) => {
      for (const [k, v] of conc.get(c.key)!) out.set(k, (out.get(k) ?? 0) + (v * t.volumes[i]!) / total);
    });
    result.set(t.code, out);
  }
  return result;
}

const col = (plan: BenchPlan, header: RegExp) => plan.columns.findIndex((c) => header.test(c.short));

describe('the compact pipetting plan of a default sheet', () => {
  const { comps, samples } = demo();
  const plan = planBench(comps, samples, o, ['base'], 'dop', ['fuel']);

  it('tube codes: C0, D1…D8, CF, CA, with a letter per replicate', () => {
    expect(plan.tubes.map((t) => t.code)).toEqual(['C0', 'D1', 'D2', 'D3', 'D4', 'D5', 'D6', 'D7', 'D8', 'CF', 'CA']);
    expect(plan.tubes[0]!.lids).toEqual(['C0a', 'C0b', 'C0c']);
    expect(tubeList(plan).map((t) => t.kind)).toEqual(['no-dopant', ...Array(8).fill('series'), 'no-fuel', 'dopant-alone']);
    // with no chemical pipetted (no fuel stock), the no-fuel control is still told from a dose and from the dopant alone
    const bare = planBench(comps.slice(0, 2), samples.map((s) => ({ ...s, conc: new Map([...s.conc].filter(([k]) => k !== 'fuel')) })), o, ['base'], 'dop', []);
    expect(bare.tubes.map((t) => t.code).slice(-2)).toEqual(['CF', 'CA']);
  });

  it('the fuel is first made into a 2 M working solution (2.04 µL of 30 % per tube is below 5 µL, and the stock is Eye Dam. 1)', () => {
    // per tube from the stock: 200 mM × 100 µL / 9790 mM = 2.043 µL
    expect(plan.working[0]!.decision).toMatchObject({ make: true, volumeRule: true, bandRule: true });
    expect(plan.working[0]!.decision.stockPerTube / UL).toBeCloseTo(2.043, 3);
    const w = plan.preparations.find((p) => p.code === 'W1')!;
    expect(w.nominal).toBe(2000);
    // 200 mM × 100 / 2000 mM = 10 µL per tube; 10 samples with fuel × 3 × 1.1 = 330 µL needed;
    // stock 330 × 2 / 9.79 = 67.4 → 68 µL; buffer 68 × (9.79/2 − 1) = 264.9 → 265 µL (5 µL steps); 333 µL made
    expect(w.transfers.map((t) => [t.from.startsWith('stock') ? 'stock' : t.from, Number((t.volume / UL).toFixed(4))])).toEqual([['stock', 68], ['buffer', 265]]);
    // as made: 9790 × 68 / 333 = 1999.16 mM
    expect(w.contents.get('fuel')!).toBeCloseTo((9790 * 68) / 333, 9);
    // every tube with fuel takes 10 µL of W1, none any stock
    const wi = col(plan, /^W1$/);
    for (const t of plan.tubes) expect(t.volumes[wi]! / UL).toBeCloseTo(t.kind === 'no-fuel' ? 0 : 10, 9);
    expect(plan.columns.some((c) => c.key === 'stock\u0000fuel')).toBe(false);
  });

  it('the handled concentrations per chemical: stock, working solution, sample', () => {
    expect(plan.handled.map((h) => h.where)).toEqual(['stock', 'working', 'sample']);
    expect(plan.handled[0]!.massFraction).toBe(0.3);
    // W1: 1999.16 mol/m³ × 0.0340147 kg/mol / 997.047 kg/m³ = 0.068203
    expect(plan.handled[1]!.massFraction!).toBeCloseTo(((9790 * 68) / 333) * (M_H2O2 / RHO_W), 12);
    expect(plan.handled[1]!.massFraction!).toBeCloseTo(0.0682, 4);
    // the sample: 10 µL of 1999.16 mM in 100 µL = 199.916 mM
    expect(plan.handled[2]!.concentration).toBeCloseTo(199.916, 3);
  });

  it('the master mix: 62 µL per tube, made for 30 tubes + 10 % (hand: C₁V₁ = C₂V₂)', () => {
    // the largest variable part: D8 dopant 3.188e14 × 100 / 1.194e15 = 26.70 → 27 µL, + 10 µL W1 = 37 µL; + 1 µL minimum buffer → 62 µL left
    const mm = plan.preparations.find((p) => p.kind === 'master-mix')!;
    expect(mm.perTube! / UL).toBeCloseTo(62, 9);
    expect(mm.tubes).toBe(30);
    // needed 62 × 30 × 1.1 = 2046 µL; base in it 1.92e14 × 100/62 = 3.0968e14 m⁻³ → 2046 × 3.0968e14 / 1.194e15 = 530.7 → 530 µL; buffer 2046 − 530 = 1516 → 1520 µL (10 µL steps)
    expect(mm.transfers.map((t) => Number((t.volume / UL).toFixed(4)))).toEqual([1520, 530]);
    // in each tube: 1.194e15 × 530/2050 × 62/100 = 1.91387e14 m⁻³ against 1.92e14 planned
    const d = plan.tubes.find((t) => t.code === 'D4')!;
    expect(d.delivered.get('base')!).toBeCloseTo((((1.194e15 * 530) / 2050) * 62) / 100, -6);
  });

  it('volumes rounded by the rule; the dose delivered after rounding beside the planned one; totals exact', () => {
    const di = col(plan, /^dopant stock$/);
    const bi = col(plan, /^buffer$/);
    const d4 = plan.tubes.find((t) => t.code === 'D4')!;
    // 1.594e14 × 100 / 1.194e15 = 13.35 µL → 13 µL; delivered 1.194e15 × 13 / 100 = 1.5522e14 m⁻³
    expect(d4.volumes[di]! / UL).toBeCloseTo(13, 12);
    expect(d4.deliveredDose!).toBeCloseTo((1.194e15 * 13) / 100, -4);
    expect(d4.plannedDose).toBe(REF);
    // the buffer takes the remainder: 100 − 62 − 13 − 10 = 15 µL
    expect(d4.volumes[bi]! / UL).toBeCloseTo(15, 9);
    // D1: 0.4929 × 1.594e14 × 100 / 1.194e15 = 6.580 µL → 6.6 µL (0.1 µL steps below 10 µL)
    expect(plan.tubes[1]!.volumes[di]! / UL).toBeCloseTo(6.6, 12);
    // the traced concentrations agree with the plan's delivered ones, and every tube holds exactly 100 µL
    const tr = traced(plan);
    for (const t of plan.tubes) for (const [k, v] of t.delivered) expect(tr.get(t.code)!.get(k) ?? 0).toBeCloseTo(v, -3);
    // the rounding moves a dose by at most half a step over its volume (here ≤ 0.05/6.6 or 0.5/10 → < 5 %)
    for (const t of plan.tubes) if (t.plannedDose) expect(Math.abs(t.deliveredDose! / t.plannedDose - 1)).toBeLessThan(0.5 / 10);
    // no pipetted volume below 1 µL; all but the buffer top-ups on their pipette grid
    expect(Math.min(...plan.allVolumes)).toBeGreaterThanOrEqual(o.minVolume * (1 - 1e-9));
    const offGrid = (v: number, step: number) => Math.abs(Math.round(v / UL / step) * step - v / UL);
    for (const t of plan.tubes) t.volumes.forEach((v, i) => i !== bi && v > 0 && expect(offGrid(v, v < 10 * UL ? 0.1 : v < 100 * UL ? 1 : 5)).toBeLessThan(1e-9));
  });

  it('order of addition: buffer first, the master mix, the dopant, the fuel last', () => {
    expect(plan.columns.map((c) => c.short)).toEqual(['buffer', 'MM', 'dopant stock', 'W1']);
    expect(plan.columns.map((c) => c.label)).toEqual(['buffer', 'master mix', 'dopant stock', 'peroxide 2 M']);
  });

  it('one section, one row per sample with its code, the rule and C₁V₁ = C₂V₂ named; the JSON keeps the same data', () => {
    const sections = pipettingSections(pipettingJson(plan));
    expect(sections.map((s) => s.id)).toEqual(['pipetting']);
    const tables = sections[0]!.blocks.filter((b) => b.kind === 'table');
    const tubes = tables.at(-1)!;
    expect(tubes.kind === 'table' && tubes.rows.map((r) => r.code)).toEqual(plan.tubes.map((t) => t.code));
    const texts = sectionTexts(sections).join('\n');
    expect(texts).toMatch(/to 0\.1 µL below 10 µL, 1 µL below 100 µL, 5 µL below 1000 µL/);
    expect(texts).toMatch(/C₁V₁ = C₂V₂/);
        expect(texts).toMatch(/MM: master mix; W1: peroxide 2 M/);
    // D4: planned 1.594, delivered 1.552 (× 10⁸ per mL, the caption's unit)
    expect(tubes.kind === 'table' && tubes.rows[4]!.cells.slice(0, 4)).toEqual(['D4\u00a0a–\u2060c', 'dose 1 ×', '1.594', '1.552']);
    expect(texts).toMatch(/dose planned and delivered in 10⁸ \/mL of sample/);
    expect(texts).toMatch(/W1.*68 µL peroxide stock.*265 µL buffer/s);
    const json = pipettingJson(plan);
    expect(json.tubes.map((t) => t.code)).toEqual(plan.tubes.map((t) => t.code));
    // D4 delivered, 1.5522e14 m⁻³ = 1.552e8 per mL to four figures
    expect(json.tubes[4]!.deliveredDose).toEqual({ value: 1.552e8, unit: 'particles/mL' });
    expect(json.handled.map((h) => h.where)).toEqual(['stock', 'working', 'sample']);
  });
});

describe('the working-dilution rule in a plan', () => {
  it('the reason gives the working solution as made, the concentration the hazards section bands', () => {
    // one dose fewer: 9 samples with fuel × 3 × 1.1 × 10 µL = 297 µL of W1; stock 297 × 2/9.79 = 60.67 → 61 µL, buffer
    // 61 × (9.79/2 − 1) = 237.6 → 240 µL (5 µL steps); as made 9790 × 61/301 = 1984.0 mM →
    // 1984.0 × 0.0340147 / 997.047 = 6.769 % w/w (the nominal 2 M would be 6.823 %)
    const { comps, samples } = demo();
    const plan = planBench(comps, samples.filter((x) => x.name !== 'dose 1.6 ×'), o, ['base'], 'dop', ['fuel']);
    const w = plan.preparations.find((p) => p.code === 'W1')!;
    expect(w.transfers.map((t) => Number((t.volume / UL).toFixed(4)))).toEqual([61, 240]);
    expect(plan.handled.find((h) => h.where === 'working')!.massFraction! * 100).toBeCloseTo(6.769, 3);
    expect(plan.working[0]!.decision.reason).toMatch(/is classified above it \(6\.77 % w\/w: H319 Eye Irrit\. 2, Warning\)/);
  });

  it('the band rule alone: 1 mL samples at 100 mM take 10.2 µL of 30 % stock, yet a 1 M working solution (3.4 %, unclassified) is made', () => {
    const comps: Component[] = [{ id: 'dop', label: 'dopant', stock: 1e16, stockText: 'x', per: 'particles' }, peroxide()];
    const samples: SampleSpec[] = [0, 1e14].map((x) => ({ name: `d${x}`, role: x ? 'series' : 'control', dose: x, conc: new Map([['dop', x], ['fuel', 100]]), usesMasterMix: false }));
    const plan = planBench(comps, samples, { ...o, sampleVolume: 1000 * UL }, [], 'dop', ['fuel']);
    // 100 mM × 1000 µL / 9790 mM = 10.2 µL ≥ 5 µL; aim 100 µL → 100 × 1000 / 100 = 1 M
    expect(plan.working[0]!.decision).toMatchObject({ make: true, volumeRule: false, bandRule: true });
    expect(plan.preparations[0]!.nominal).toBe(1000);
  });

  it('no hazard data and at least 5 µL per tube: pipetted from the stock, and the sheet says the bands could not be compared', () => {
    const comps: Component[] = [{ id: 'dop', label: 'dopant', stock: 1e16, stockText: 'x', per: 'particles' }, peroxide({ hazards: null })];
    const samples: SampleSpec[] = [0, 1e14].map((x) => ({ name: `d${x}`, role: x ? 'series' : 'control', dose: x, conc: new Map([['dop', x], ['fuel', 100]]), usesMasterMix: false }));
    const plan = planBench(comps, samples, { ...o, sampleVolume: 1000 * UL }, [], 'dop', ['fuel']);
    expect(plan.working[0]!.decision).toMatchObject({ make: false, bandRule: null });
    expect(plan.working[0]!.decision.reason).toMatch(/could not be compared/);
    expect(plan.preparations).toEqual([]);
    // and below 5 µL it is made all the same (the volume rule needs no hazard data)
    const small = planBench(comps, samples.map((s) => ({ ...s, conc: new Map([...s.conc, ['fuel', 20]]) })), { ...o, sampleVolume: 1000 * UL }, [], 'dop', ['fuel']);
    expect(small.working[0]!.decision).toMatchObject({ make: true, volumeRule: true, bandRule: null });
  });

  it('a working solution that does not fit is made one round step stronger, and the rule is judged again at that concentration', () => {
    // a 50 % w/w stock (17.6 M, taken as given): 200 mM is 1.14 µL per tube; W1 at 2 M (10 µL) leaves 100 − 85 − 10 − 1 = 4 µL
    // for the master mix, below the base's 5 µL, so W1 is made at 5 M (4 µL): 5000 × 0.0340147 / 997.047 = 17.06 % w/w, Eye Dam. 1
    const comps: Component[] = [
      { id: 'base', label: 'base', stock: 4e15, stockText: 'x', per: 'particles' },
      { id: 'dop', label: 'dopant', stock: 1e15, stockText: 'x', per: 'particles' },
      peroxide({ stock: 17600, stockMassFraction: 0.5 }),
    ];
    const samples: SampleSpec[] = [0, 8.5e14].map((x) => ({ name: `d${x}`, role: x ? 'series' : 'control', dose: x, conc: new Map([['base', 2e14], ['dop', x], ['fuel', 200]]), usesMasterMix: true }));
    const plan = planBench(comps, samples, o, ['base'], 'dop', ['fuel']);
    expect(plan.preparations.find((p) => p.kind === 'working')!.nominal).toBe(5000);
    // as made: 2 samples × 3 × 1.1 × 4 µL = 26.4 µL; stock 26.4 × 5/17.6 = 7.5 µL, buffer 7.5 × (17.6/5 − 1) = 18.9 → 19 µL;
    // 17600 × 7.5/26.5 = 4981.1 mM → 4981.1 × 0.0340147 / 997.047 = 16.99 % w/w, still Eye Dam. 1 (8–50 %)
    expect(plan.preparations.find((p) => p.kind === 'working')!.transfers.map((t) => Number((t.volume / UL).toFixed(4)))).toEqual([7.5, 19]);
    expect(plan.working[0]!.decision.reason).toMatch(/\(17 % w\/w: H318 Eye Dam\. 1, Danger\)/);
    expect(plan.tubes[1]!.volumes[col(plan, /^W1$/)]! / UL).toBeCloseTo(4, 12);
  });

  it('a working solution that does not fit the tube is made stronger, and if none fits the stock is used and the reason says so', () => {
    // dopant 85 µL at the top dose; the base 5 µL: with 10 µL of W1 only 4 µL would be left for the master mix
    const comps: Component[] = [
      { id: 'base', label: 'base', stock: 4e15, stockText: 'x', per: 'particles' },
      { id: 'dop', label: 'dopant', stock: 1e15, stockText: 'x', per: 'particles' },
      peroxide(),
    ];
    const samples: SampleSpec[] = [0, 8.5e14].map((x) => ({ name: `d${x}`, role: x ? 'series' : 'control', dose: x, conc: new Map([['base', 2e14], ['dop', x], ['fuel', 200]]), usesMasterMix: true }));
    const plan = planBench(comps, samples, o, ['base'], 'dop', ['fuel']);
    // 5 M would be the next round value, above half the 9.79 M stock: no working solution fits, the 2.0 µL come from the stock
    expect(plan.preparations.filter((p) => p.kind === 'working')).toEqual([]);
    expect(plan.working[0]!.decision.make).toBe(false);
    expect(plan.working[0]!.decision.reason).toMatch(/do not fit, so it is pipetted from the stock/);
    expect(plan.tubes[1]!.volumes[col(plan, /^peroxide stock$/)]! / UL).toBeCloseTo(2, 12);
  });
});

describe('serial dilutions and plans that do not fit', () => {
  function setup(dopantStock: number, doses: number[]): { comps: Component[]; samples: SampleSpec[] } {
    const comps: Component[] = [
      { id: 'base', label: 'base beads', stock: 1e15, stockText: '1e9/mL', per: 'particles' },
      { id: 'dop', label: 'dopant', stock: dopantStock, stockText: 'x', per: 'particles' },
      peroxide(),
    ];
    const samples: SampleSpec[] = doses.map((x, i) => ({ name: `s${i}`, role: 'series', dose: x, conc: new Map([['base', 2e14], ['dop', x], ['fuel', 200]]), usesMasterMix: true }));
    samples.push({ name: 'alone', role: 'control', dose: doses[1]!, conc: new Map([['dop', doses[1]!], ['fuel', 200]]), usesMasterMix: false });
    return { comps, samples };
  }

  it('a 1:10 dilution appears exactly when a volume would fall below the minimum; each step exactly 1:10 in settable volumes', () => {
    // 100 µL × 5e15 / 1e18 = 0.5 µL of dopant stock for the smallest dose: below 1 µL → from S1 (1:10), 5.0 µL
    const small = setup(1e18, [0, 5e15, 1e16, 4e17]);
    const plan = planBench(small.comps, small.samples, o, ['base'], 'dop', ['fuel']);
    const serial = plan.preparations.filter((p) => p.kind === 'serial');
    expect(serial.map((p) => p.label)).toEqual(['dopant 1:10']);
    const [take, diluent] = serial[0]!.transfers.map((t) => t.volume);
    expect(diluent! / take!).toBeCloseTo(9, 12);
    const tr = traced(plan);
    for (const t of plan.tubes) for (const [k, v] of t.planned) if (v > 0) expect(Math.abs(tr.get(t.code)!.get(k)! / v - 1)).toBeLessThan(0.05);
    expect(Math.min(...plan.allVolumes)).toBeGreaterThanOrEqual(o.minVolume * (1 - 1e-9));
    // the largest dose still from the stock (40 µL), the small ones from the dilution
    const s1 = col(plan, /^S1$/);
    const st = col(plan, /^dopant stock$/);
    expect(plan.tubes[1]!.volumes[s1]! / UL).toBeCloseTo(5, 12);
    expect(plan.tubes[3]!.volumes[st]! / UL).toBeCloseTo(40, 12);
    // 0.005 µL: three steps of 1:10
    const tiny = setup(1e18, [0, 5e13, 4e17]);
    const p2 = planBench(tiny.comps, tiny.samples, o, ['base'], 'dop', ['fuel']);
    expect(p2.preparations.filter((p) => p.kind === 'serial').map((p) => p.label)).toEqual(['dopant 1:10', 'dopant 1:100', 'dopant 1:1000']);
    expect(Math.min(...p2.allVolumes)).toBeGreaterThanOrEqual(o.minVolume * (1 - 1e-9));
    // and none with the minimum lowered to 0.2 µL
    expect(planBench(small.comps, small.samples, { ...o, minVolume: 0.2 * UL }, ['base'], 'dop', ['fuel']).preparations.filter((p) => p.kind === 'serial')).toEqual([]);
  });

  it('an impossible plan fails and says what would fix it', () => {
    const { comps, samples } = setup(2e14, [0, 1e14, 2e14]);
    let err: unknown = null;
    try {
      planBench(comps, samples, o, ['base'], 'dop', ['fuel']);
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(DomainError);
    expect((err as DomainError).code).toBe('impossible-volumes');
    const msg = (err as Error).message;
    expect(msg).toMatch(/need .* µL in a 100 µL tube/);
    // every draw is c V / stock: at the top dose the stocks alone, undiluted, take 2e14/2e14 (dopant) + 2e14/1e15
    // (base) + 200/9790 (fuel) = 1.22 of the tube, whatever its volume, so no sample volume is offered
    expect(msg).not.toMatch(/larger sample volume/);
    expect(msg).toMatch(/No sample volume helps: undiluted, the stocks alone would fill 122 % of any tube/);
    // the dopant at 2e14 m⁻³ = 2e8/mL is too dilute for a 2e14 m⁻³ dose in 100 µL
    const m = /a dopant stock of at least ([\d.]+) × 10([⁰¹²³⁴⁵⁶⁷⁸⁹]+) particles\/mL \(now 2 × 10⁸ particles\/mL/.exec(msg);
    expect(m).not.toBeNull();
    const least = Number(m![1]) * 10 ** Number([...m![2]!].map((c) => '⁰¹²³⁴⁵⁶⁷⁸⁹'.indexOf(c)).join(''));
    expect(least).toBeGreaterThan(2e8);
    // and that stock does fit
    const fixed = setup(least * 1e6, [0, 1e14, 2e14]);
    expect(() => planBench(fixed.comps, fixed.samples, o, ['base'], 'dop', ['fuel'])).not.toThrow();
  });

  it('a larger sample volume is offered where the fixed volumes are what does not fit (the stocks alone fill less than the tube)', () => {
    // 10 µL samples of the demo shape: undiluted the top dose takes 2 × 1.594e14/1.194e15 + 1.92e14/1.194e15 + 200/9790
    // = 0.4482 of the tube, but W1 (at least 1 µL), the 1 µL minimum buffer and the rounding do not fit in 10 µL
    const { comps, samples } = demo();
    let msg = '';
    try {
      planBench(comps, samples, { ...o, sampleVolume: 10 * UL }, ['base'], 'dop', ['fuel']);
    } catch (e) {
      msg = (e as Error).message;
    }
    expect(msg).toMatch(/larger sample volume \(at least .* µL\)/);
    expect(msg).not.toMatch(/No sample volume helps/);
  });

  it('when the fullest tube takes its dopant from a dilution, no stock is offered as the fix (a stronger stock would not shrink it); a raised minimum is named', () => {
    // a 20 µL minimum: 1.5e14 m⁻³ needs 100 µL × 1.5e14 / 1e15 = 15 µL of stock, below 20 µL → 150 µL of a 1:10 dilution
    const { comps, samples } = setup(1e15, [0, 5e13, 1.5e14]);
    let msg = '';
    try {
      planBench(comps, samples, { ...o, minVolume: 20 * UL }, ['base'], 'dop', ['fuel']);
    } catch (e) {
      msg = (e as Error).message;
    }
    expect(msg).toMatch(/the fullest tube, s2, takes 150 µL of a dopant dilution/);
    expect(msg).not.toMatch(/dopant stock of at least/);
    expect(msg).toMatch(/a smaller minimum volume to pipette \(now 20 µL/);
  });
});

describe('stocks', () => {
  it('30 % w/w hydrogen peroxide at 1.11 g/mL is about 9.79 mol/L', () => {
    const rec = chemicalRecordSchema.parse({ id: 'h2o2', name: 'hydrogen peroxide', diffusivity: '1.4e-9 m^2/s', molarMass: '34.0147 g/mol', stock: { description: '30 %', massFraction: '30 percent', density: '1.11 g/mL' } });
    const st = chemicalStock(rec, undefined)!;
    expect(st.molar / 1000).toBeCloseTo(9.79, 2);
    expect(st.massFraction).toBeCloseTo(0.3, 12);
    expect(chemicalStock(rec, { percentWw: 30, solutionDensity: { value: 1110, sd: 0, unit: 'kg/m^3' } })!.molar / 1000).toBeCloseTo(9.79, 2);
    expect(chemicalStock(rec, { molarConcentration: { value: 1000, sd: 0, unit: 'M' } })!.molar).toBe(1000);
  });
});
