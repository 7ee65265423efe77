/**
 * The bench's liquid arithmetic (server/protocol/dilution.ts, docs/model.md §11):
 *
 * - the rounding rule is common practice, no source: a 2–10 µL pipette is set in
 *   0.1 µL, a 20–100 µL one in 1 µL, a 200–1000 µL one in 5 µL (and 10 µL above);
 *   the expected values below are that rule applied by hand;
 * - C₁V₁ = C₂V₂ (the dilution relation: the amount of solute is conserved on
 *   mixing) for every concentration as made, computed by hand beside each check;
 * - the working-dilution rule (common practice, no source): a stock below 5 µL per
 *   tube, or classified above the working solution, is first diluted;
 * - the hazard bands of hydrogen peroxide: Regulation (EC) No 1272/2008 (CLP),
 *   Annex VI, index 008-003-00-9, specific concentration limits, FROM MEMORY
 *   (Ox. Liq. 1 H271 ≥ 70 %; Ox. Liq. 2 H272 50–70 %; Skin Corr. 1A H314 ≥ 70 %;
 *   Skin Corr. 1B H314 50–70 %; Skin Irrit. 2 H315 35–50 %; Eye Dam. 1 H318 8–50 %;
 *   Eye Irrit. 2 H319 5–8 %; STOT SE 3 H335 ≥ 35 %), checked on both sides of every
 *   limit against the demo shelf's bands (seeds/demo-hazards.json) as classify()
 *   reads them. To be checked against the regulation's current text and the
 *   supplier's safety data sheet, which take precedence.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { bandAbove, decideWorking, nextUp125, onPipetteGrid, pipetteStep, roundDown125, roundDownToPipette, roundToPipette, roundUpToPipette, tenfoldTake, workingConcentration } from '../../server/protocol/dilution.js';
import { classify, hazardSetSchema } from '../../server/protocol/hazards.js';

const UL = 1e-9;
const ul = (x: number) => x * UL;
const asUl = (v: number) => Number((v / UL).toFixed(6));

describe('the rounding rule (common practice)', () => {
  it('steps of 0.1 µL below 10 µL, 1 µL below 100 µL, 5 µL below 1000 µL, 10 µL above', () => {
    expect(asUl(pipetteStep(ul(9.99)))).toBe(0.1);
    expect(asUl(pipetteStep(ul(10)))).toBe(1);
    expect(asUl(pipetteStep(ul(99.9)))).toBe(1);
    expect(asUl(pipetteStep(ul(100)))).toBe(5);
    expect(asUl(pipetteStep(ul(999)))).toBe(5);
    expect(asUl(pipetteStep(ul(1000)))).toBe(10);
  });

  it('rounds to the nearest step, exactly as written (hand values)', () => {
    // 2.043 µL (the old sheet's peroxide) → 2.0; 6.58 → 6.6; 13.35 → 13; 26.7 → 27; 662.4 → 660; 663 → 665; 1664 → 1660
    expect(roundToPipette(ul(2.043))).toBe(ul(2.0));
    expect(roundToPipette(ul(6.58))).toBe(6.6e-9);
    expect(roundToPipette(ul(13.35))).toBe(13e-9);
    expect(roundToPipette(ul(26.7))).toBe(27e-9);
    expect(roundToPipette(ul(662.4))).toBe(660e-9);
    expect(roundToPipette(ul(663))).toBe(665e-9);
    expect(roundToPipette(ul(1664))).toBe(1660e-9);
    // 9.96 µL on the 0.1 µL grid is 10.0 µL, which is also on the 1 µL grid
    expect(roundToPipette(ul(9.96))).toBe(10e-9);
    expect(roundToPipette(0)).toBe(0);
  });

  it('up and down: never less than needed, never more than room', () => {
    expect(roundUpToPipette(ul(2.01))).toBe(2.1e-9);
    expect(roundUpToPipette(ul(67.42))).toBe(68e-9);
    expect(roundUpToPipette(ul(99.2))).toBe(100e-9);
    expect(roundUpToPipette(ul(101))).toBe(105e-9);
    expect(roundUpToPipette(ul(5))).toBe(5e-9);
    expect(roundDownToPipette(ul(70.26))).toBe(70e-9);
    expect(roundDownToPipette(ul(9.99))).toBe(9.9e-9);
    expect(onPipetteGrid(ul(39.6))).toBe(false);
    expect(onPipetteGrid(ul(45))).toBe(true);
  });

  it('a 1:10 step: both volumes settable and the factor exactly 10 (hand values)', () => {
    // 40 µL needed: take 4.0 µL, 36 µL of diluent (on the 1 µL grid)
    expect(tenfoldTake(ul(40), ul(1))).toEqual({ take: 4e-9, diluent: 36e-9 });
    // 43.2 µL: 4.4 → 39.6 (not settable), 4.5 → 40.5, … 4.9 → 44.1, 5.0 → 45: take 5 µL, 45 µL
    expect(tenfoldTake(ul(43.2), ul(1))).toEqual({ take: 5e-9, diluent: 45e-9 });
    // 130 µL: 13 → 117 and 14 → 126 are not on the 5 µL grid, 15 → 135 is
    expect(tenfoldTake(ul(130), ul(1))).toEqual({ take: 15e-9, diluent: 135e-9 });
    // never below ten minimum volumes in all
    expect(tenfoldTake(ul(2), ul(1))).toEqual({ take: 1e-9, diluent: 9e-9 });
  });
});

describe('round concentrations and the working-dilution rule (common practice)', () => {
  it('1-2-5 concentrations', () => {
    expect(roundDown125(2000)).toBe(2000);
    expect(roundDown125(1999)).toBe(1000);
    expect(roundDown125(4999)).toBe(2000);
    expect(roundDown125(5000)).toBe(5000);
    expect(roundDown125(0.037)).toBeCloseTo(0.02, 15);
    expect(nextUp125(1000)).toBe(2000);
    expect(nextUp125(2000)).toBe(5000);
    expect(nextUp125(5000)).toBe(10000);
  });

  it('the working concentration puts about the aimed volume into each tube, and is at least twice as dilute as the stock', () => {
    // 200 mM in 100 µL from about 10 µL: c₁ = 200 mM × 100 / 10 = 2 M (C₁V₁ = C₂V₂), a round value
    expect(workingConcentration(200, ul(100), ul(10), 9790)).toBe(2000);
    // 300 mM: 3 M → round down to 2 M (15 µL per tube)
    expect(workingConcentration(300, ul(100), ul(10), 9790)).toBe(2000);
    // 200 mM from a 3 M stock: 2 M is not twice as dilute as 3 M: no working solution
    expect(workingConcentration(200, ul(100), ul(10), 3000)).toBeNull();
  });

  it('made when the stock volume per tube is below 5 µL, or the stock is classified above the working solution', () => {
    const set = hazardSetSchema.parse(JSON.parse(readFileSync('seeds/demo-hazards.json', 'utf8')).h2o2);
    // 30 % w/w stock vs a 2 M working solution: 2000 mol/m³ × 0.0340147 kg/mol / 997.047 kg/m³ = 0.06823
    const stock = classify(set, 0.3);
    const work = classify(set, (2000 * 0.0340147) / 997.047);
    expect(bandAbove(stock, work)).toBe(true);
    expect(bandAbove(work, work)).toBe(false);
    expect(bandAbove(null, work)).toBeNull();
    // no hazard data is not "no hazard": nothing to compare
    expect(bandAbove(classify(null, 0.3), classify(null, 0.068))).toBeNull();
    // 2.043 µL per tube: both rules
    const both = decideWorking(ul(2.043), ul(5), stock, work, true);
    expect(both).toMatchObject({ make: true, volumeRule: true, bandRule: true });
    expect(both.reason).toMatch(/below 5 µL/);
    expect(both.reason).toMatch(/H318 Eye Dam\. 1, Danger.*H319 Eye Irrit\. 2, Warning/);
    // 10.2 µL per tube, stock above the working solution: the band rule alone
    const bandOnly = decideWorking(ul(10.2), ul(5), stock, classify(set, 0.0341, { version: 1 }), true);
    expect(bandOnly).toMatchObject({ make: true, volumeRule: false, bandRule: true });
    // a working solution below every band is said to be below the limits of the shelf's data, never "no hazard"
    expect(bandOnly.reason).toMatch(/\(3\.41 % w\/w: below the classification limits of the shelf’s hazard data, version 1\)/);
    expect(bandOnly.reason).not.toMatch(/no hazard/);
    // both sides of the volume limit, without hazard data: the bands cannot be compared, and the reason says so
    expect(decideWorking(ul(4.9), ul(5), null, null, true)).toMatchObject({ make: true, volumeRule: true, bandRule: null });
    const at5 = decideWorking(ul(5), ul(5), null, null, true);
    expect(at5).toMatchObject({ make: false, volumeRule: false, bandRule: null });
    expect(at5.reason).toMatch(/could not be compared \(no hazard data/);
    // not possible (the stock is already near a round working concentration): not made, and said
    expect(decideWorking(ul(2), ul(5), stock, work, false)).toMatchObject({ make: false });
  });
});

describe('hydrogen peroxide bands: CLP Annex VI, index 008-003-00-9 (from memory), against seeds/demo-hazards.json', () => {
  const set = hazardSetSchema.parse(JSON.parse(readFileSync('seeds/demo-hazards.json', 'utf8')).h2o2);
  // each limit on both sides: tests/protocol/hazards.test.ts and tests/references/clp-h2o2.test.ts (one table each is enough)
  it('the concentrations a default sheet handles: 30 % stock, the 2 M working solution, the 200 mM sample', () => {
    // stock 30 % w/w: Eye Dam. 1 (8–50 %), Danger
    expect(classify(set, 0.3)).toMatchObject({ signal: 'Danger', statements: [{ code: 'H318' }] });
    // W1 as made, 1.999 M: 1999.16 × 0.0340147 / 997.047 = 0.06820 → Eye Irrit. 2 (5–8 %), Warning
    expect(classify(set, 0.0682)).toMatchObject({ signal: 'Warning', statements: [{ code: 'H319' }] });
    // sample 200 mM: 0.682 % → below every limit
    expect(classify(set, 0.00682).statements).toEqual([]);
  });
});
