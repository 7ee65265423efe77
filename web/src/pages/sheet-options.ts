/**
 * The bench sheet's options as the Sheet and Outcomes pages carry them: in the page's own URL (so a sheet
 * with its options can be reloaded, bookmarked and linked from one page to the other), in the query of the
 * API's GET links (Markdown, JSON, HTML), and as the body of POST /api/plans/:id/sheet. Tube codes depend on
 * these options (replicates, doses, candidate), and delivered doses on the stocks too, so the Outcomes page
 * rebuilds the same sheet from the same options.
 */

/** A stock given on the page instead of the shelf's: a species as a number density, a chemical as a molar concentration. */
export interface StockOption {
  density?: string;
  molarConcentration?: string;
}

export interface SheetOptions {
  candidate?: string;
  sampleVolume?: string;
  replicates?: number;
  minVolume?: string;
  /** fraction, 0–1 */
  overage?: number;
  buffer?: string;
  doses?: string[];
  operator?: string;
  tubeVolume?: string;
  chamberVolume?: string;
  closedChamber?: boolean;
  stocks?: Record<string, StockOption>;
}

const TEXT = ['candidate', 'sampleVolume', 'minVolume', 'buffer', 'operator', 'tubeVolume', 'chamberVolume'] as const;

/** Split a comma-separated dose list as the API does ("0, 1e6 1/mL" → ["0", "1e6 1/mL"]). */
export const splitList = (text: string): string[] => text.split(',').map((x) => x.trim()).filter((x) => x !== '');

/** The options in a page URL's query (unknown or unreadable parameters are left out; the service checks the rest). */
export function optionsFromQuery(q: URLSearchParams): SheetOptions {
  const o: SheetOptions = {};
  for (const k of TEXT) {
    const v = q.get(k);
    if (v !== null && v.trim() !== '') o[k] = v.trim();
  }
  const rep = q.get('replicates');
  if (rep !== null && /^\d+$/.test(rep.trim())) o.replicates = Number(rep);
  const ov = q.get('overage');
  if (ov !== null && ov.trim() !== '' && Number.isFinite(Number(ov))) o.overage = Number(ov);
  const doses = q.get('doses');
  if (doses !== null && splitList(doses).length > 0) o.doses = splitList(doses);
  const closed = q.get('closedChamber');
  if (closed === 'true' || closed === 'false') o.closedChamber = closed === 'true';
  const stocks = q.get('stocks');
  if (stocks) {
    try {
      const s = JSON.parse(stocks) as unknown;
      if (s !== null && typeof s === 'object' && !Array.isArray(s)) {
        const out: Record<string, StockOption> = {};
        for (const [id, v] of Object.entries(s as Record<string, unknown>)) {
          const x = v as Record<string, unknown> | null;
          if (x && typeof x.density === 'string') out[id] = { density: x.density };
          else if (x && typeof x.molarConcentration === 'string') out[id] = { molarConcentration: x.molarConcentration };
        }
        if (Object.keys(out).length > 0) o.stocks = out;
      }
    } catch {
      // a hand-edited URL: the stocks are left out, the shelf's are used
    }
  }
  return o;
}

/** The options as query parameters of the API's GET sheet (every option but stocks, which only the POST form takes). */
export function apiQuery(o: SheetOptions): URLSearchParams {
  const q = new URLSearchParams();
  for (const k of TEXT) if (o[k] !== undefined) q.set(k, o[k]!);
  if (o.replicates !== undefined) q.set('replicates', String(o.replicates));
  if (o.overage !== undefined) q.set('overage', String(o.overage));
  if (o.doses?.length) q.set('doses', o.doses.join(','));
  if (o.closedChamber !== undefined) q.set('closedChamber', String(o.closedChamber));
  return q;
}

/** The options in a page URL (the API's query plus stocks as JSON). */
export function pageQuery(o: SheetOptions, extra: Record<string, string> = {}): URLSearchParams {
  const q = apiQuery(o);
  if (o.stocks && Object.keys(o.stocks).length > 0) q.set('stocks', JSON.stringify(o.stocks));
  for (const [k, v] of Object.entries(extra)) q.set(k, v);
  return q;
}

/** The options as the body of POST /api/plans/:id/sheet (and the `sheet` of an outcome entry). */
export function optionsBody(o: SheetOptions): Record<string, unknown> {
  const b: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(o)) if (v !== undefined && !(k === 'stocks' && Object.keys(v as object).length === 0)) b[k] = v;
  return b;
}

/** "?a=b" or "" */
export const qs = (q: URLSearchParams): string => (q.toString() ? `?${q.toString()}` : '');
