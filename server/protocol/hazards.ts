/**
 * Hazard banding: a chemical's hazard data are bands of mass fraction
 * [min, max) each carrying one GHS hazard statement with its class, pictogram
 * codes (GHS01–GHS09, UN GHS), signal word and precautionary statements. The
 * classification of a solution is the union of the bands that contain its
 * concentration, with the CLP/GHS precedence rules that matter here: the signal
 * word is "Danger" if any band says so, and the exclamation mark (GHS07) is not
 * shown for skin or eye irritation when the corrosion pictogram (GHS05) is.
 */
import { z } from 'zod';

export const hazardBandSchema = z.strictObject({
  /** inclusive lower bound of the mass fraction (0–1) */
  min: z.number().min(0).max(1),
  /** exclusive upper bound, null for no upper bound */
  max: z.number().min(0).max(1).nullable(),
  /** hazard statement code, e.g. H318 */
  statement: z.string().regex(/^EUH?\d{3}[A-Za-z]*$|^H\d{3}[A-Za-z]*$/, 'a hazard statement code such as H318'),
  text: z.string().min(1).max(500),
  /** hazard class and category, e.g. "Eye Dam. 1" */
  hazardClass: z.string().max(100),
  pictograms: z.array(z.string().regex(/^GHS0[1-9]$/, 'a GHS pictogram code GHS01–GHS09')).max(9),
  signal: z.enum(['Danger', 'Warning']).nullable(),
  precautionary: z.array(z.string().max(300)).max(20).default([]),
});

export const hazardSetSchema = z
  .strictObject({
    bands: z.array(hazardBandSchema).max(100),
    /** where the bands come from (a regulation, a safety data sheet …) */
    source: z.string().min(1).max(1000),
    incompatibilities: z.string().max(2000).optional(),
    storage: z.string().max(2000).optional(),
    disposal: z.string().max(2000).optional(),
    /** gas evolution, pressure, other handling notes */
    handling: z.string().max(2000).optional(),
  })
  .superRefine((s, ctx) => {
    s.bands.forEach((b, i) => {
      if (b.max !== null && !(b.max > b.min)) ctx.addIssue({ code: 'custom', message: 'max must be above min (or null)', path: ['bands', i, 'max'] });
    });
  });

export type HazardBand = z.output<typeof hazardBandSchema>;
export type HazardSet = z.output<typeof hazardSetSchema>;

export interface Classification {
  /** mass fraction classified */
  massFraction: number;
  statements: { code: string; text: string; hazardClass: string }[];
  pictograms: string[];
  signal: 'Danger' | 'Warning' | null;
  precautionary: string[];
}

const IRRITATION = new Set(['H315', 'H319']);

/** The classification of a solution of mass fraction w under a chemical's bands. */
export function classify(set: HazardSet | null, w: number): Classification {
  const bands = (set?.bands ?? []).filter((b) => w >= b.min && (b.max === null || w < b.max));
  const statements = bands.map((b) => ({ code: b.statement, text: b.text, hazardClass: b.hazardClass }));
  let pictograms = [...new Set(bands.flatMap((b) => b.pictograms))].sort();
  if (pictograms.includes('GHS05')) {
    const otherGhs07 = bands.some((b) => b.pictograms.includes('GHS07') && !IRRITATION.has(b.statement));
    if (!otherGhs07) pictograms = pictograms.filter((p) => p !== 'GHS07');
  }
  const signal = bands.some((b) => b.signal === 'Danger') ? 'Danger' : bands.some((b) => b.signal === 'Warning') ? 'Warning' : null;
  const precautionary = [...new Set(bands.flatMap((b) => b.precautionary))];
  return { massFraction: w, statements, pictograms, signal, precautionary };
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
