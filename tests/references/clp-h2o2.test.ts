/**
 * The demo hazard data for hydrogen peroxide (seeds/demo-hazards.json) against the CLP Annex VI specific
 * concentration limits, written out here independently of the data file (docs/model.md §11).
 *
 * Source: Regulation (EC) No 1272/2008 (CLP), Annex VI, Table 3, index 008-003-00-9 (hydrogen peroxide
 * solution), specific concentration limits — from memory (docs/references.md):
 *   Ox. Liq. 1 H271 C ≥ 70 %;  Ox. Liq. 2 H272 50 % ≤ C < 70 %;
 *   Skin Corr. 1A H314 C ≥ 70 %;  Skin Corr. 1B H314 50 % ≤ C < 70 %;
 *   Skin Irrit. 2 H315 35 % ≤ C < 50 %;  Eye Dam. 1 H318 8 % ≤ C < 50 %;  Eye Irrit. 2 H319 5 % ≤ C < 8 %;
 *   STOT SE 3 H335 C ≥ 35 %.  (C in % w/w.)
 * Pictograms and signal words per class from CLP Annex I / UN GHS (from memory): Ox. Liq. → GHS03 Danger;
 * Skin Corr. 1A/1B and Eye Dam. 1 → GHS05 Danger; Skin Irrit. 2, Eye Irrit. 2, STOT SE 3 → GHS07 Warning;
 * GHS07 is not shown for skin/eye irritation when GHS05 is (CLP Article 26(1)(c); recalled, then read in a published copy of the Article).
 * Molar mass of H₂O₂ 34.0147 g/mol and water's density 997.047 kg/m³ at 25 °C (handbook, from memory):
 * 200 mM is w = 0.2 mol/L × 34.0147 g/mol / 997.047 g/L = 0.68232 %.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { classify, hazardSetSchema } from '../../server/protocol/hazards.js';

const set = hazardSetSchema.parse(JSON.parse(readFileSync(new URL('../../seeds/demo-hazards.json', import.meta.url), 'utf8')).h2o2);

/** The CLP Annex VI limits as listed in the header, [from, to) in % w/w (to = null: no upper limit). */
const CLP: { code: string; cls: string; from: number; to: number | null; pictogram: string; signal: 'Danger' | 'Warning' }[] = [
  { code: 'H271', cls: 'Ox. Liq. 1', from: 70, to: null, pictogram: 'GHS03', signal: 'Danger' },
  { code: 'H272', cls: 'Ox. Liq. 2', from: 50, to: 70, pictogram: 'GHS03', signal: 'Danger' },
  { code: 'H314', cls: 'Skin Corr. 1A', from: 70, to: null, pictogram: 'GHS05', signal: 'Danger' },
  { code: 'H314', cls: 'Skin Corr. 1B', from: 50, to: 70, pictogram: 'GHS05', signal: 'Danger' },
  { code: 'H315', cls: 'Skin Irrit. 2', from: 35, to: 50, pictogram: 'GHS07', signal: 'Warning' },
  { code: 'H318', cls: 'Eye Dam. 1', from: 8, to: 50, pictogram: 'GHS05', signal: 'Danger' },
  { code: 'H319', cls: 'Eye Irrit. 2', from: 5, to: 8, pictogram: 'GHS07', signal: 'Warning' },
  { code: 'H335', cls: 'STOT SE 3', from: 35, to: null, pictogram: 'GHS07', signal: 'Warning' },
];

/** What CLP says at p % w/w, from the table above alone. */
function expected(p: number) {
  const rows = CLP.filter((r) => p >= r.from && (r.to === null || p < r.to));
  let pictograms = [...new Set(rows.map((r) => r.pictogram))];
  if (pictograms.includes('GHS05') && rows.every((r) => r.pictogram !== 'GHS07' || r.code === 'H315' || r.code === 'H319')) pictograms = pictograms.filter((x) => x !== 'GHS07');
  const signal = rows.some((r) => r.signal === 'Danger') ? 'Danger' : rows.length ? 'Warning' : null;
  return { statements: rows.map((r) => `${r.code} ${r.cls}`).sort(), pictograms: pictograms.sort(), signal };
}
const got = (p: number) => {
  const c = classify(set, p / 100, { version: 1 });
  return { statements: c.statements.map((s) => `${s.code} ${s.hazardClass}`).sort(), pictograms: c.pictograms, signal: c.signal };
};

describe('hydrogen peroxide: demo bands = CLP Annex VI specific concentration limits (index 008-003-00-9, from memory)', () => {
  it('30 % (a common stock): of the specific limits only Eye Dam. 1 H318, GHS05, Danger; the data say what they leave out', () => {
    expect(got(30)).toEqual(expected(30));
    expect(got(30)).toEqual({ statements: ['H318 Eye Dam. 1'], pictograms: ['GHS05'], signal: 'Danger' });
    // Annex VI also lists acute toxicity (Acute Tox. 4, H302 and H332; from memory), which has no specific
    // concentration limit and so is not a band here: the source printed with the data must say so
    expect(set.source).toMatch(/Acute toxicity .*\(H302, H332\) is not banded here/);
    expect(set.source).toMatch(/safety data sheet takes precedence/);
  });
  it('3 % (pharmacy grade): below every limit, said as "below the classification limits", not "no hazard"', () => {
    expect(expected(3).statements).toEqual([]);
    const c = classify(set, 0.03, { version: 1 });
    expect(c.status).toBe('below-limits');
    expect(c.note).toMatch(/below the classification limits of the shelf’s hazard data \(version 1\)/);
    expect(c.note).toMatch(/supplier’s safety data sheet/);
    expect(c.note).not.toMatch(/no hazard/i);
  });
  it('200 mM in the sample (0.68232 % w/w): below the limits too', () => {
    const w = (200 * 0.0340147) / 997.047; // mol/m³ × kg/mol / (kg/m³)
    expect(w * 100).toBeCloseTo(0.68232, 4);
    expect(classify(set, w).status).toBe('below-limits');
    expect(expected(w * 100).statements).toEqual([]);
  });
  // Both sides of every limit (0.999 and 1.001 of it), and points inside each range.
  const edges = [...new Set(CLP.flatMap((r) => [r.from, ...(r.to !== null ? [r.to] : [])]))];
  const points = [0.5, 4, 6, 7.5, 10, 20, 40, 45, 55, 60, 65, 75, 90, 100, ...edges.flatMap((e) => [e * 0.999, e, e * 1.001])];
  it.each(points.sort((a, b) => a - b).map((p) => [p]))('at %s %% w/w', (p) => {
    expect(got(p)).toEqual(expected(p));
  });
  it('every band that applies carries its precautionary statements, and they come back with the classification', () => {
    for (const b of set.bands) expect(b.precautionary.length, `${b.statement} ${b.hazardClass}`).toBeGreaterThan(0);
    for (const p of [5, 8, 30, 35, 50, 70]) {
      const c = classify(set, p / 100);
      expect(c.status).toBe('classified');
      expect(c.precautionary.length).toBeGreaterThan(0);
      // P280 (protective gloves/eye protection) for every eye or skin class (CLP Annex IV, from memory)
      if (c.statements.some((s) => /H31[4589]/.test(s.code))) expect(c.precautionary.some((x) => x.startsWith('P280'))).toBe(true);
    }
  });
});
