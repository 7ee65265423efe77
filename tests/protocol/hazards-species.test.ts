/**
 * Hazard data that cannot mislead (docs/model.md §11): "no data" is not "no hazard"; species' bands by form;
 * precautionary statements with every classification; hazardsFor over the store.
 *
 * Sources for the expected classes: the demo enzyme data (seeds/demo-species-hazards.json) follow the
 * CLP generic concentration limits as recalled in their source text (Annex I, 3.4: Resp. Sens. 1 from 1 %
 * in a mixture; Annex II, 2.8: EUH208 from 0.1 % — from memory); the test states them again here.
 */
import { readFileSync } from 'node:fs';
import { beforeEach, describe, expect, it } from 'vitest';
import {
  belowLimits,
  classify,
  hazardLookup,
  hazardsFor,
  hazardSetSchema,
  NO_HAZARD_DATA,
  NO_HAZARD_DATA_SENTENCE,
  speciesHazardSetSchema,
  type HazardSet,
} from '../../server/protocol/hazards.js';
import { seedDemoShelf } from '../../server/shelf/seed.js';
import { openDatabase } from '../../server/store/db.js';
import { hazardsRepository } from '../../server/store/hazards.js';

const speciesData = JSON.parse(readFileSync(new URL('../../seeds/demo-species-hazards.json', import.meta.url), 'utf8')) as Record<string, unknown>;
const catalase = speciesHazardSetSchema.parse(speciesData['catalase-e3']);
const codes = (set: HazardSet | null, w: number | null, form?: 'powder' | 'solution' | 'suspension') => classify(set, w, { form: form ?? null }).statements.map((s) => `${s.code} ${s.hazardClass}`);

describe('no hazard data is not "no hazard"', () => {
  it('classify(null) says no-data and sends the reader to the supplier’s safety data sheet', () => {
    const c = classify(null, 0.3);
    expect(c.status).toBe('no-data');
    expect(c.note).toBe(NO_HAZARD_DATA);
    expect(c.note).toMatch(/safety data sheet/);
    expect(c).toMatchObject({ statements: [], pictograms: [], signal: null, precautionary: [] });
    for (const text of [NO_HAZARD_DATA, NO_HAZARD_DATA_SENTENCE]) {
      expect(text).toMatch(/not classified/);
      expect(text).toMatch(/supplier’s safety data sheet/);
      expect(text).not.toMatch(/no hazard statement applies/i);
    }
  });
  it('data with no band at the concentration: below the limits of that version, still the SDS', () => {
    const c = classify(catalase, 1e-6, { form: 'solution', version: 4 });
    expect(c.status).toBe('below-limits');
    expect(c.note).toBe(belowLimits(4));
    expect(c.note).toMatch(/version 4/);
  });
  it('data, but not for the form handled: no data for that form', () => {
    const onlyPowder = speciesHazardSetSchema.parse({ ...(speciesData['catalase-e3'] as object), forms: ['powder'], bands: catalase.bands.filter((b) => b.forms?.includes('powder')) });
    const c = classify(onlyPowder, 0.001, { form: 'suspension' });
    expect(c.status).toBe('no-data-for-form');
    expect(c.note).toMatch(/no hazard data on the shelf for the suspension .*cover powder/);
    expect(classify(onlyPowder, 1, { form: 'powder' }).status).toBe('classified');
  });
});

describe('species hazard data by form (demo catalase)', () => {
  it('the powder is a respiratory sensitiser with the dust precautions', () => {
    const c = classify(catalase, 1, { form: 'powder' });
    expect(codes(catalase, 1, 'powder')).toEqual(['H334 Resp. Sens. 1']);
    expect(c).toMatchObject({ status: 'classified', signal: 'Danger', pictograms: ['GHS08'] });
    expect(c.precautionary.some((p) => /^P261 Avoid breathing dust/.test(p))).toBe(true);
    expect(c.precautionary.some((p) => p.startsWith('P284'))).toBe(true);
  });
  it('a solution: Resp. Sens. 1 from 1 %, EUH208 from 0.1 % to 1 %, none below (both sides of each limit)', () => {
    expect(codes(catalase, 0.01, 'solution')).toEqual(['H334 Resp. Sens. 1']);
    // EUH208 is a supplemental label element (CLP Annex II, 2.8, from memory), not a hazard class: the
    // mixture is not classified Resp. Sens. 1 below 1 %, and the class text must not read as if it were
    expect(codes(catalase, 0.00999, 'solution')).toEqual(['EUH208 not classified; EUH208 label (sensitiser from 0.1 %, below the 1 % limit)']);
    expect(classify(catalase, 0.005, { form: 'solution' })).toMatchObject({ signal: null, pictograms: [] });
    expect(codes(catalase, 0.001, 'solution')).toHaveLength(1);
    expect(codes(catalase, 0.000999, 'solution')).toEqual([]);
    // the solution's H334 carries the mist/spray wording, not the powder's dust
    const sol = classify(catalase, 0.02, { form: 'solution' });
    expect(sol.precautionary.some((p) => /mist\/spray/.test(p))).toBe(true);
    expect(sol.precautionary.some((p) => /^P261 Avoid breathing dust\.$/.test(p))).toBe(false);
  });
  it('an unknown concentration is classified as the neat material and says so', () => {
    const c = classify(catalase, null, { form: 'suspension' });
    expect(c).toMatchObject({ status: 'classified', massFraction: 1, assumedNeat: true });
    expect(c.note).toMatch(/concentration not known: classified as the neat material/);
  });
  it('a form not stated applies the bands of every form, and says so', () => {
    const c = classify(catalase, 0.5);
    expect(c.statements.map((s) => s.code)).toEqual(['H334']); // said once, though two bands (powder; liquids) apply
    expect(c.precautionary.some((p) => /dust\.$/.test(p)) && c.precautionary.some((p) => /mist\/spray\.$/.test(p))).toBe(true);
    expect(c.note).toMatch(/form not stated: the bands of every form applied/);
  });
  it('every classification that applies a band carries precautionary statements (demo data, chemicals and species)', () => {
    const chem = JSON.parse(readFileSync(new URL('../../seeds/demo-hazards.json', import.meta.url), 'utf8')) as Record<string, unknown>;
    const sets = [...Object.values(chem).map((b) => hazardSetSchema.parse(b)), ...Object.values(speciesData).map((b) => speciesHazardSetSchema.parse(b))];
    for (const set of sets) {
      for (const b of set.bands) expect(b.precautionary.length, `${b.statement}`).toBeGreaterThan(0);
      for (const form of ['powder', 'solution', 'suspension'] as const) {
        for (const w of [0.0005, 0.002, 0.05, 0.3, 0.6, 1]) {
          const c = classify(set, w, { form });
          if (c.status === 'classified') expect(c.precautionary.length).toBeGreaterThan(0);
        }
      }
    }
  });
  it('a species set must state its forms, and a band’s forms must be among them', () => {
    const { forms: _forms, ...noForms } = speciesData['catalase-e3'] as Record<string, unknown>;
    const r = speciesHazardSetSchema.safeParse(noForms);
    expect(r.success).toBe(false);
    expect(r.error!.issues.map((i) => i.path.join('.'))).toContain('forms');
    const bad = speciesHazardSetSchema.safeParse({ ...(speciesData['catalase-e3'] as object), forms: ['solution'] });
    expect(bad.success).toBe(false);
    expect(bad.error!.issues.map((i) => i.path.join('.'))).toContain('bands.0.forms.0');
    expect(hazardSetSchema.safeParse({ source: 's', bands: [], forms: ['gel'] }).success).toBe(false);
  });
});

describe('hazardsFor over the store', () => {
  let lookup: ReturnType<typeof hazardLookup>;
  beforeEach(() => {
    const db = openDatabase(':memory:');
    seedDemoShelf(db);
    lookup = hazardLookup(hazardsRepository(db));
  });
  it('a chemical: the current version, each handled concentration classified', () => {
    const r = hazardsFor(lookup, 'chemical', 'h2o2', [
      { where: 'stock bottle (30 % w/w)', massFraction: 0.3 },
      { where: 'working solution (6 % w/w)', massFraction: 0.06 },
      { where: 'sample (0.68 % w/w)', massFraction: 0.0068 },
    ], 'hydrogen peroxide');
    expect(r).toMatchObject({ kind: 'chemical', id: 'h2o2', classified: true, version: 1, recordedBy: 'demo seed' });
    expect(r.asHandled.map((h) => h.classification.status)).toEqual(['classified', 'classified', 'below-limits']);
    expect(r.asHandled.map((h) => h.classification.statements.map((s) => s.code))).toEqual([['H318'], ['H319'], []]);
    expect(r.asHandled.every((h) => h.classification.version === 1)).toBe(true);
    expect(r.verify).toMatch(/version 1 of the shelf’s record for hydrogen peroxide/);
    expect(r.handling).toMatch(/never close a vial/);
  });
  it('a species by form: the powder and the stock solution of the demo catalase (1 mg/mL ≈ 0.1 % w/w)', () => {
    const r = hazardsFor(lookup, 'species', 'catalase-e3', [
      { where: 'lyophilised powder', massFraction: 1, form: 'powder' },
      { where: 'stock (1 mg/mL)', massFraction: 1 / 997.047, form: 'solution' },
      { where: 'sample', massFraction: 1e-6, form: 'solution' },
    ]);
    expect(r).toMatchObject({ kind: 'species', classified: true, version: 1, forms: ['powder', 'solution', 'suspension'] });
    expect(r.asHandled.map((h) => h.classification.statements.map((s) => s.code))).toEqual([['H334'], ['EUH208'], []]);
    expect(r.asHandled[2]!.classification.note).toMatch(/below the classification limits .*version 1/);
  });
  it('nothing on the shelf: classified false, every entry no-data, the SDS sentence', () => {
    const r = hazardsFor(lookup, 'chemical', 'glucose', [{ where: 'stock', massFraction: 0.18 }]);
    expect(r).toMatchObject({ classified: false, version: null, source: null });
    expect(r.asHandled[0]!.classification.status).toBe('no-data');
    expect(r.verify).toContain(NO_HAZARD_DATA_SENTENCE);
    expect(hazardsFor(lookup, 'species', 'catb-0.22-l04', [{ where: 'stock', massFraction: null, form: 'suspension' }]).asHandled[0]!.classification.note).toBe(NO_HAZARD_DATA);
  });
});

describe('pictogram precedence: CLP Article 26(1)(b)–(d) (Regulation (EC) No 1272/2008; recalled, then read in a published copy of the Article)', () => {
  // (b) GHS06 → no GHS07; (c) GHS05 → no GHS07 for skin or eye irritation; (d) GHS08 for respiratory
  // sensitisation → no GHS07 for skin sensitisation or skin and eye irritation. Pictograms and signal words
  // per class from CLP Annex I (from memory): Acute Tox. 3 GHS06 Danger, Acute Tox. 4 / Skin Irrit. 2 /
  // Eye Irrit. 2 / Skin Sens. 1 / STOT SE 3 GHS07 Warning, Resp. Sens. 1 GHS08 Danger.
  const band = (statement: string, hazardClass: string, pictograms: string[], signal: 'Danger' | 'Warning') => ({ min: 0, max: null, statement, text: hazardClass, hazardClass, pictograms, signal, precautionary: ['P280 Wear protective gloves.'] });
  const set = (...bands: ReturnType<typeof band>[]) => hazardSetSchema.parse({ source: 'test bands, classes as named above', bands });
  const acuteTox3 = band('H301', 'Acute Tox. 3', ['GHS06'], 'Danger');
  const acuteTox4 = band('H302', 'Acute Tox. 4', ['GHS07'], 'Warning');
  const skinIrrit = band('H315', 'Skin Irrit. 2', ['GHS07'], 'Warning');
  const eyeIrrit = band('H319', 'Eye Irrit. 2', ['GHS07'], 'Warning');
  const skinSens = band('H317', 'Skin Sens. 1', ['GHS07'], 'Warning');
  const respSens = band('H334', 'Resp. Sens. 1', ['GHS08'], 'Danger');
  const stot3 = band('H335', 'STOT SE 3', ['GHS07'], 'Warning');
  const eyeDam = band('H318', 'Eye Dam. 1', ['GHS05'], 'Danger');
  const pics = (s: HazardSet) => classify(s, 0.5).pictograms;
  it('(b) the skull and crossbones hides the exclamation mark whatever it stands for', () => {
    expect(pics(set(acuteTox3, acuteTox4, stot3))).toEqual(['GHS06']);
    expect(pics(set(acuteTox4, stot3))).toEqual(['GHS07']);
  });
  it('(c) corrosion hides it for skin and eye irritation only', () => {
    expect(pics(set(eyeDam, skinIrrit, eyeIrrit))).toEqual(['GHS05']);
    expect(pics(set(eyeDam, skinIrrit, skinSens))).toEqual(['GHS05', 'GHS07']); // skin sensitisation keeps it
  });
  it('(d) the health hazard for respiratory sensitisation hides it for skin sensitisation and skin/eye irritation, not for the rest', () => {
    expect(pics(set(respSens, skinSens, skinIrrit, eyeIrrit))).toEqual(['GHS08']);
    expect(pics(set(respSens, skinSens, stot3))).toEqual(['GHS07', 'GHS08']);
    // GHS08 for another hazard (here a carcinogen, Carc. 2, H351) does not
    expect(pics(set(band('H351', 'Carc. 2', ['GHS08'], 'Warning'), skinSens))).toEqual(['GHS07', 'GHS08']);
  });
});

describe('mass fractions at the ends of the range', () => {
  const upTo1 = hazardSetSchema.parse({ source: 'test band', bands: [{ min: 0.5, max: 1, statement: 'H318', text: 'Causes serious eye damage.', hazardClass: 'Eye Dam. 1', pictograms: ['GHS05'], signal: 'Danger', precautionary: ['P280 Wear eye protection.'] }] });
  it('a band up to max 1 holds the neat material (w = 1, and an unknown w classified as neat)', () => {
    expect(classify(upTo1, 1).status).toBe('classified');
    expect(classify(upTo1, null)).toMatchObject({ status: 'classified', assumedNeat: true });
    expect(classify(upTo1, 0.4999).status).toBe('below-limits');
  });
  it('a w above 1 (from an approximate density) counts as the neat material; a negative w is refused', () => {
    expect(classify(upTo1, 1.03)).toMatchObject({ status: 'classified', massFraction: 1 });
    expect(() => classify(upTo1, -0.01)).toThrow(RangeError);
    expect(() => classify(null, -0.01)).toThrow(RangeError);
  });
});
