/**
 * Hazard banding: the hazard data of a chemical or a species are bands of mass fraction [min, max), each
 * carrying one GHS hazard statement with its class, pictogram codes (GHS01–GHS09, UN GHS), signal word and
 * precautionary statements, and optionally the forms it applies to (powder, solution, suspension: a
 * species' data, e.g. an enzyme powder as a respiratory sensitiser). The classification of what is handled
 * is the union of the bands that contain its mass fraction (and apply to its form), with the CLP/GHS
 * precedence rules that matter here: the signal word is "Danger" if any band says so, and the exclamation
 * mark (GHS07) gives way as CLP Article 26(1) says: (b) not at all beside the skull and crossbones (GHS06),
 * (c) not for skin or eye irritation beside the corrosion pictogram (GHS05), (d) not for skin sensitisation
 * or skin and eye irritation beside the health hazard pictogram (GHS08) for respiratory sensitisation.
 *
 * Answers that cannot mislead (docs/model.md §11): a classification says whether there were data at all
 * (`status`): "no-data" (nothing on the shelf: not classified, read the supplier's safety data sheet),
 * "no-data-for-form" (data, but not for this form), "below-limits" (data, and no band contains this
 * concentration: below the classification limits of the shelf's data, version N — still check the safety
 * data sheet) or "classified". Never "no hazard".
 */
import { z } from 'zod';

/** The forms a material is handled in. */
export const HAZARD_FORMS = ['powder', 'solution', 'suspension'] as const;
export type HazardForm = (typeof HAZARD_FORMS)[number];
export const hazardFormSchema = z.enum(HAZARD_FORMS);

export const hazardBandSchema = z.strictObject({
  /** inclusive lower bound of the mass fraction (0–1) */
  min: z.number().min(0).max(1),
  /** exclusive upper bound, null for no upper bound (1 includes the neat material, w = 1) */
  max: z.number().min(0).max(1).nullable(),
  /** hazard statement code, e.g. H318 */
  statement: z.string().max(16).regex(/^EUH?\d{3}[A-Za-z]*$|^H\d{3}[A-Za-z]*$/, 'a hazard statement code such as H318'),
  text: z.string().min(1).max(500),
  /** hazard class and category, e.g. "Eye Dam. 1" */
  hazardClass: z.string().max(100),
  pictograms: z.array(z.string().regex(/^GHS0[1-9]$/, 'a GHS pictogram code GHS01–GHS09')).max(9),
  signal: z.enum(['Danger', 'Warning']).nullable(),
  precautionary: z.array(z.string().max(300)).max(20).default([]),
  /** the forms this band applies to; absent: every form */
  forms: z.array(hazardFormSchema).min(1).max(HAZARD_FORMS.length).optional(),
});

const setFields = {
  bands: z.array(hazardBandSchema).max(100),
  /** where the bands come from (a regulation, a safety data sheet …) */
  source: z.string().min(1).max(1000),
  /** the forms these data cover (a form outside them has no data); absent: every form */
  forms: z.array(hazardFormSchema).min(1).max(HAZARD_FORMS.length).optional(),
  incompatibilities: z.string().max(2000).optional(),
  storage: z.string().max(2000).optional(),
  disposal: z.string().max(2000).optional(),
  /** gas evolution, pressure, other handling notes */
  handling: z.string().max(2000).optional(),
};

function refineSet(s: { bands: z.output<typeof hazardBandSchema>[]; forms?: HazardForm[] | undefined }, ctx: z.RefinementCtx) {
  s.bands.forEach((b, i) => {
    if (b.max !== null && !(b.max > b.min)) ctx.addIssue({ code: 'custom', message: 'max must be above min (or null)', path: ['bands', i, 'max'] });
    b.forms?.forEach((f, j) => {
      if (s.forms && !s.forms.includes(f)) ctx.addIssue({ code: 'custom', message: `the set covers ${s.forms.join(', ')}, not ${f}`, path: ['bands', i, 'forms', j] });
    });
  });
}

/** A chemical's hazard data (bands apply to every form unless they say otherwise). */
export const hazardSetSchema = z.strictObject(setFields).superRefine(refineSet);
/** A species' hazard data: the same bands, and the forms the data cover must be stated. */
export const speciesHazardSetSchema = z.strictObject({ ...setFields, forms: z.array(hazardFormSchema).min(1).max(HAZARD_FORMS.length) }).superRefine(refineSet);

export type HazardBand = z.output<typeof hazardBandSchema>;
export type HazardSet = z.output<typeof hazardSetSchema>;
export type SpeciesHazardSet = z.output<typeof speciesHazardSetSchema>;

/** What a concentration without any hazard data on the shelf says (per concentration, short). */
export const NO_HAZARD_DATA = 'no hazard data on the shelf: not classified — check the supplier’s safety data sheet';
/** The same for a whole chemical or species, as a sentence for the hazard block. */
export const NO_HAZARD_DATA_SENTENCE =
  'No hazard data on the shelf: it is not classified here, which does not mean it is harmless. Read the supplier’s safety data sheet before handling it; it takes precedence over this sheet.';
/** Data exist, but not for the form handled. */
export const noDataForForm = (form: HazardForm, covered: readonly HazardForm[]) =>
  `no hazard data on the shelf for the ${form} (the shelf’s data cover ${covered.join(', ')}): not classified — check the supplier’s safety data sheet`;
/** Data exist, and no band contains the concentration handled. */
export const belowLimits = (version: number | null) =>
  `below the classification limits of the shelf’s hazard data${version !== null ? ` (version ${version})` : ''}: no band applies at this concentration — check the supplier’s safety data sheet`;

export type ClassificationStatus = 'no-data' | 'no-data-for-form' | 'below-limits' | 'classified';

export interface Classification {
  /** mass fraction classified (1 when not known and taken as the neat material: see `assumedNeat`) */
  massFraction: number;
  /** the form classified, null when not stated (every band applied) */
  form: HazardForm | null;
  /** whether there were data for what is handled, and whether a band applied (docs/model.md §11) */
  status: ClassificationStatus;
  /** the version of the shelf's hazard data used, null when none or not given */
  version: number | null;
  statements: { code: string; text: string; hazardClass: string }[];
  pictograms: string[];
  signal: 'Danger' | 'Warning' | null;
  /** the precautionary statements of every band that applies (empty only when none applies: see `note`) */
  precautionary: string[];
  /** the words to print beside it: the no-data or below-limits wording, or the classes that apply */
  note: string;
  /** the mass fraction was not known, so the neat material (w = 1) was classified */
  assumedNeat?: boolean;
}

/**
 * Whether the exclamation mark (GHS07) stays beside the other pictograms, by the precedence rules of CLP
 * Article 26(1) (docs/model.md §11): (b) GHS06 present → never; (c) GHS05 present → not for skin or eye
 * irritation (H315, H319); (d) GHS08 for respiratory sensitisation (H334) present → not for skin
 * sensitisation (H317) or skin and eye irritation. It stays when some band shows it for anything else
 * (e.g. H335, respiratory irritation).
 */
function keepsExclamationMark(bands: readonly HazardBand[]): boolean {
  const shown = (p: string) => bands.some((b) => b.pictograms.includes(p));
  if (shown('GHS06')) return false;
  const givesWay = new Set<string>();
  if (shown('GHS05')) for (const h of ['H315', 'H319']) givesWay.add(h);
  if (bands.some((b) => b.statement === 'H334' && b.pictograms.includes('GHS08'))) for (const h of ['H315', 'H319', 'H317']) givesWay.add(h);
  return bands.some((b) => b.pictograms.includes('GHS07') && !givesWay.has(b.statement));
}

/**
 * The classification of a material of mass fraction w (0–1, or null when not known: then the neat material,
 * w = 1, is classified and `assumedNeat` says so) in a given form under a set of bands (null: no data).
 * A w above 1 (a mass fraction worked out with an approximate density) counts as the neat material; a
 * negative one is refused (RangeError). A band whose max is 1 includes the neat material.
 */
export function classify(set: HazardSet | null, w: number | null, opts: { form?: HazardForm | null; version?: number | null } = {}): Classification {
  const form = opts.form ?? null;
  const version = opts.version ?? null;
  const assumedNeat = w === null || !Number.isFinite(w);
  if (!assumedNeat && w < 0) throw new RangeError(`a mass fraction must be 0–1 (or null: not known), got ${w}`);
  const massFraction = assumedNeat ? 1 : Math.min(1, w);
  const neat = assumedNeat ? { assumedNeat: true } : {};
  const empty = { massFraction, form, version, statements: [], pictograms: [], signal: null, precautionary: [], ...neat };
  if (set === null) return { ...empty, status: 'no-data', note: NO_HAZARD_DATA };
  if (form !== null && set.forms && !set.forms.includes(form)) return { ...empty, status: 'no-data-for-form', note: noDataForForm(form, set.forms) };
  const bands = set.bands.filter((b) => massFraction >= b.min && (b.max === null || massFraction < b.max || (b.max >= 1 && massFraction >= 1)) && (form === null || !b.forms || b.forms.includes(form)));
  if (bands.length === 0) return { ...empty, status: 'below-limits', note: belowLimits(version) };
  // one line per statement and class (two bands of one class, e.g. per form, say it once)
  const statements = [...new Map(bands.map((b) => [`${b.statement}\u0000${b.hazardClass}\u0000${b.text}`, { code: b.statement, text: b.text, hazardClass: b.hazardClass }])).values()];
  let pictograms = [...new Set(bands.flatMap((b) => b.pictograms))].sort();
  if (pictograms.includes('GHS07') && !keepsExclamationMark(bands)) pictograms = pictograms.filter((p) => p !== 'GHS07');
  const signal = bands.some((b) => b.signal === 'Danger') ? 'Danger' : bands.some((b) => b.signal === 'Warning') ? 'Warning' : null;
  const precautionary = [...new Set(bands.flatMap((b) => b.precautionary))];
  const classes = [...new Set(statements.map((s) => s.hazardClass))].join(', ');
  const unstated = form === null && set.forms !== undefined ? ' (form not stated: the bands of every form applied)' : '';
  const note = `${classes}${assumedNeat ? ' (concentration not known: classified as the neat material)' : ''}${unstated}${version !== null ? ` — shelf hazard data version ${version}` : ''}; check the supplier’s safety data sheet, which takes precedence`;
  return { massFraction, form, version, status: 'classified', statements, pictograms, signal, precautionary, note, ...neat };
}

/** A chemical's or species' hazard data as stored: the parsed set and its record. */
export interface StoredHazards {
  set: HazardSet;
  version: number;
  createdAt: string;
  author: string;
  note: string | null;
}
export type HazardKind = 'chemical' | 'species';
/** Finds the current hazard data of a chemical or species (null: none on the shelf). */
export type HazardLookup = (kind: HazardKind, id: string) => StoredHazards | null;

/** The lookup over the store (server/store/hazards.ts), each body parsed with its kind's schema. */
export function hazardLookup(repo: { of(kind: HazardKind): { current<B>(id: string): { body: B; version: number; createdAt: string; author: string; note: string | null } | null } }): HazardLookup {
  return (kind, id) => {
    const h = repo.of(kind).current<unknown>(id);
    if (!h) return null;
    const set = kind === 'species' ? speciesHazardSetSchema.parse(h.body) : hazardSetSchema.parse(h.body);
    return { set, version: h.version, createdAt: h.createdAt, author: h.author, note: h.note };
  };
}

/** One thing handled: where (the stock bottle, a working solution, the sample), its mass fraction (null: not known), its form. */
export interface Handled {
  where: string;
  massFraction: number | null;
  form?: HazardForm;
}

/** The hazards of a chemical or species as handled at the bench. */
export interface HazardReport {
  kind: HazardKind;
  id: string;
  /** false when the shelf holds no hazard data for it (every entry of asHandled is then "no-data") */
  classified: boolean;
  version: number | null;
  recordedAt: string | null;
  recordedBy: string | null;
  source: string | null;
  /** the forms the data cover (null: every form, or no data) */
  forms: HazardForm[] | null;
  incompatibilities: string | null;
  storage: string | null;
  disposal: string | null;
  handling: string | null;
  asHandled: (Handled & { classification: Classification })[];
  /** what to print about the data themselves: their version and the safety data sheet first, or that there are none */
  verify: string;
}

/**
 * The current hazard data of a chemical or species and the classification of each thing handled
 * (docs/model.md §11). `name` is used in the wording (default: the id).
 * @example hazardsFor(lookup, 'chemical', 'h2o2', [{ where: 'stock bottle', massFraction: 0.3 }, { where: 'sample', massFraction: 0.0068 }])
 */
export function hazardsFor(lookup: HazardLookup, kind: HazardKind, id: string, handled: readonly Handled[], name = id): HazardReport {
  const stored = lookup(kind, id);
  const set = stored?.set ?? null;
  const version = stored?.version ?? null;
  return {
    kind,
    id,
    classified: stored !== null,
    version,
    recordedAt: stored?.createdAt ?? null,
    recordedBy: stored?.author ?? null,
    source: set?.source ?? null,
    forms: set?.forms ?? null,
    incompatibilities: set?.incompatibilities ?? null,
    storage: set?.storage ?? null,
    disposal: set?.disposal ?? null,
    handling: set?.handling ?? null,
    asHandled: handled.map((h) => ({ ...h, classification: classify(set, h.massFraction, { form: h.form ?? null, version }) })),
    verify: stored
      ? `Hazard data: version ${stored.version} of the shelf’s record for ${name} (entered ${stored.createdAt.slice(0, 10)} by ${stored.author}). Check them against your supplier’s safety data sheet for the product you use; where they differ, the safety data sheet takes precedence.`
      : `${name}: ${NO_HAZARD_DATA_SENTENCE}`,
  };
}

/** What the pictogram codes depict (UN GHS). */
export const PICTOGRAMS: Record<string, string> = {
  GHS01: 'exploding bomb',
  GHS02: 'flame',
  GHS03: 'flame over circle (oxidiser)',
  GHS04: 'gas cylinder',
  GHS05: 'corrosion',
  GHS06: 'skull and crossbones',
  GHS07: 'exclamation mark',
  GHS08: 'health hazard',
  GHS09: 'environment',
};
