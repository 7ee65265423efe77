/**
 * Upper bounds on every array and string a request may carry: far above what a
 * lab would ever send, low enough that no request can make the service compute
 * or collect problems for long (README "Limits of the API" lists them; the zod
 * schemas' descriptions carry them into the OpenAPI document at /api/docs).
 *
 * The species bound keeps one analysis to a moment: an analysis with crowding
 * of 32 species and 1–3 or 16 chemicals took 0.1–0.4 s on the 2-core development
 * machine lightly loaded, up to 1.0 s with it loaded four times over (100
 * species took 7 s, 400 took 24 s: the cost grows about as the cube of the modes). `npm run bench:limits`
 * (bench/limits.ts) prints the figures.
 */
export const LIMITS = {
  /** species in one mixture, sample or plan base */
  species: 32,
  /** chemicals in one mixture or sample */
  chemicals: 16,
  /** couplings of one species (one per chemical, at most) */
  couplings: 16,
  /** candidate species of one plan or screen request (the work budget may refuse fewer) */
  candidates: 10_000,
  /** entries of each list (chemicals, species) in one shelf import */
  importEntries: 10_000,
  /** ids, keys */
  id: 64,
  /** names */
  name: 200,
  /** descriptions, references, short texts */
  text: 2000,
  /** notes */
  notes: 5000,
  /** a value with its unit, as typed ("0.22 um^2/s") */
  quantity: 200,
  /** a search or other query-string text */
  query: 200,
  /** columns of one JSON data table (calibration) */
  columns: 16,
  /** rows of one data table (calibration, CSV lines or JSON column length) */
  rows: 500_000,
  /** CSV text, characters */
  csv: 5_000_000,
  /** nesting depth of a JSON body (objects and arrays) */
  depth: 64,
  /** problems reported by one 400 (the rest are counted) */
  problems: 100,
} as const;
