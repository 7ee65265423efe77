/**
 * Hazard banding of hydrogen peroxide at and around each band edge.
 *
 * Source: Regulation (EC) No 1272/2008, Annex VI, index 008-003-00-9 — specific
 * concentration limits as listed in docs/references.md (H271 ≥ 70 %; H272 50–70 %;
 * H314 1A ≥ 70 %, 1B 50–70 %; H315 35–50 %; H318 8–50 %; H319 5–8 %; H335 ≥ 35 %;
 * the first four bands confirmed, the rest recalled). Pictogram codes per the UN
 * GHS (GHS03 oxidiser, GHS05 corrosion, GHS07 exclamation mark) and the rule that
 * GHS07 is not shown for skin/eye irritation when GHS05 applies.
 * The bands under test are the demo data in seeds/demo-hazards.json.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { classify, hazardSetSchema } from '../../server/protocol/hazards.js';

const set = hazardSetSchema.parse(JSON.parse(readFileSync(new URL('../../seeds/demo-hazards.json', import.meta.url), 'utf8')).h2o2);
const codes = (w: number) => classify(set, w).statements.map((s) => `${s.code} ${s.hazardClass}`).sort();

describe('hydrogen peroxide bands', () => {
  it.each([
    [0.007, []],
    [0.049, []],
    [0.05, ['H319 Eye Irrit. 2']],
    [0.079, ['H319 Eye Irrit. 2']],
    [0.08, ['H318 Eye Dam. 1']],
    [0.3, ['H318 Eye Dam. 1']],
    [0.349, ['H318 Eye Dam. 1']],
    [0.35, ['H315 Skin Irrit. 2', 'H318 Eye Dam. 1', 'H335 STOT SE 3']],
    [0.499, ['H315 Skin Irrit. 2', 'H318 Eye Dam. 1', 'H335 STOT SE 3']],
    [0.5, ['H272 Ox. Liq. 2', 'H314 Skin Corr. 1B', 'H335 STOT SE 3']],
    [0.699, ['H272 Ox. Liq. 2', 'H314 Skin Corr. 1B', 'H335 STOT SE 3']],
    [0.7, ['H271 Ox. Liq. 1', 'H314 Skin Corr. 1A', 'H335 STOT SE 3']],
    [0.9, ['H271 Ox. Liq. 1', 'H314 Skin Corr. 1A', 'H335 STOT SE 3']],
  ])('at %s mass fraction', (w, expected) => {
    expect(codes(w)).toEqual(expected);
  });

  it('signal words and pictograms follow the bands and the precedence rule', () => {
    expect(classify(set, 0.079)).toMatchObject({ signal: 'Warning', pictograms: ['GHS07'] });
    expect(classify(set, 0.08)).toMatchObject({ signal: 'Danger', pictograms: ['GHS05'] });
    // 35 %: corrosion (H318) hides the exclamation mark for H315, but H335 keeps it
    expect(classify(set, 0.35)).toMatchObject({ signal: 'Danger', pictograms: ['GHS05', 'GHS07'] });
    expect(classify(set, 0.7)).toMatchObject({ signal: 'Danger', pictograms: ['GHS03', 'GHS05', 'GHS07'] });
    expect(classify(set, 0.007)).toMatchObject({ signal: null, pictograms: [] });
    expect(classify(null, 0.3).statements).toEqual([]);
  });

  it('bands are validated as data', () => {
    const bad = hazardSetSchema.safeParse({ source: 'x', bands: [{ min: 0.5, max: 0.2, statement: 'H318', text: 't', hazardClass: 'c', pictograms: ['GHS99'], signal: 'Danger' }] });
    expect(bad.success).toBe(false);
    const paths = bad.error!.issues.map((i) => i.path.join('.'));
    expect(paths).toEqual(expect.arrayContaining(['bands.0.pictograms.0', 'bands.0.max']));
  });
});
