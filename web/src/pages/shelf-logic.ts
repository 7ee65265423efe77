/**
 * The Shelf pages' logic that needs no page: a shelf record flattened into labelled fields (as typed),
 * the differences between two revisions field by field, problems of a refused save matched to the
 * fields they name, and an import's conflicts in words. Pure (no DOM), so tests/web/shelf-logic.test.ts
 * checks it in node.
 */
import { fmtWithSd, formatQuantity, type DisplayKind } from '../lib/format.js';

/** One field of a record, as a person reads it. */
export interface FlatField {
  /** a stable key: `diffusivity`, `couplings[h2o2].mobility`, `diffusivity provenance` */
  key: string;
  /** words: `diffusivity`, `h2o2 coupling: mobility`, `diffusivity: provenance` */
  label: string;
  /** as a person reads it: the typed text with its units set (`0.22 µm²/s ± 0.02 µm²/s`), and the bench
   * units beside it when they read differently (`-2e-16 mol/s (= −200 amol/s)`) */
  text: string;
  /** the value exactly as typed (`0.22 um^2/s ± 0.02 um^2/s`): what two records are compared by */
  raw: string;
}

/** Typed unit text set as printed: `um^2/(s*mM)` → `µm²/(s·mM)`. Numbers are left as typed. */
export function prettyUnits(s: string): string {
  return s
    .replace(/\^-1\b/g, '⁻¹')
    .replace(/\^2\b/g, '²')
    .replace(/\^3\b/g, '³')
    .replace(/\*/g, '·')
    .replace(/(^|[\s/(·])u(m|M|L|g|s|mol)\b/g, '$1µ$2')
    .replace(/\bdegC\b/g, '°C');
}

/** The display kind of a record's field by its key (`stock.density` of a species is a number density, of a chemical a mass density). */
export function kindOfField(key: string, type: 'species' | 'chemical'): DisplayKind | null {
  const last = key.replace(/\[[^\]]*\]/g, '').split('.').pop() ?? '';
  const table: Record<string, DisplayKind> = {
    diffusivity: 'diffusivity',
    radius: 'length',
    materialDensity: 'massDensity',
    molarMass: 'molarMass',
    lossRate: 'rate',
    solubility: 'concentration',
    massConcentration: 'massConcentration',
    volumeFraction: 'fraction',
    molarConcentration: 'concentration',
    massFraction: 'fraction',
    concentration: 'concentration',
    activity: 'amountRate',
    maxRate: 'amountRate',
    michaelis: 'concentration',
    mobility: 'mobility',
  };
  if (last === 'density') return type === 'species' ? 'numberDensity' : 'massDensity';
  return table[last] ?? null;
}

const WORDS: Record<string, string> = {
  id: 'id',
  name: 'name',
  kind: 'kind',
  diffusivity: 'diffusivity',
  radius: 'radius',
  materialDensity: 'material density',
  molarMass: 'molar mass',
  lossRate: 'loss rate',
  solubility: 'solubility',
  stock: 'stock',
  description: 'description',
  density: 'number density',
  volumeFraction: 'volume fraction',
  massConcentration: 'mass concentration',
  molarConcentration: 'molar concentration',
  massFraction: 'mass fraction',
  concentration: 'concentration',
  activity: 'activity',
  maxRate: 'maximal rate',
  michaelis: 'Michaelis constant',
  product: 'product',
  productYield: 'product yield',
  mobility: 'mobility',
  provenance: 'provenance',
  source: 'source',
  reference: 'reference',
  date: 'date',
  by: 'by',
  measurement: 'measurement',
  notes: 'notes',
  couplings: 'couplings',
};

const word = (k: string) => WORDS[k] ?? k;

type Obj = Record<string, unknown>;
const isObj = (x: unknown): x is Obj => x !== null && typeof x === 'object' && !Array.isArray(x);

/** A stored quantity (`{ si, input, … }`) or a typed one (`{ value, sd?, provenance? }`). */
function asQuantity(x: unknown): { value: string; sd: string; si?: number; siSd?: number; provenance?: Obj } | null {
  if (!isObj(x)) return null;
  if (typeof x.si === 'number' && 'input' in x) {
    return {
      value: String(x.input),
      sd: x.sdInput === undefined || x.sdInput === null ? '' : String(x.sdInput),
      si: x.si,
      siSd: typeof x.sd === 'number' ? x.sd : 0,
      ...(isObj(x.provenance) ? { provenance: x.provenance } : {}),
    };
  }
  if ('value' in x && (typeof x.value === 'string' || typeof x.value === 'number')) {
    return { value: String(x.value), sd: x.sd === undefined || x.sd === null ? '' : String(x.sd), ...(isObj(x.provenance) ? { provenance: x.provenance } : {}) };
  }
  return null;
}

/** The words of a provenance: `measured; measurement 3 …; 2026-11-20; by A. Person`. */
export function provenanceText(p: unknown): string {
  if (!isObj(p)) return '';
  const parts = [p.source, p.reference, p.date, p.by ? `by ${String(p.by)}` : null, p.measurement ? `measurement ${String(p.measurement)}` : null];
  return parts.filter((x) => x !== undefined && x !== null && x !== '').map(String).join('; ');
}

/** A quantity as typed, with its uncertainty: `0.22 um^2/s ± 0.02 um^2/s`. */
export function quantityText(x: unknown): string {
  const q = asQuantity(x);
  if (q) return q.sd ? `${q.value} ± ${q.sd}` : q.value;
  return x === undefined || x === null ? '' : typeof x === 'object' ? JSON.stringify(x) : String(x);
}

/**
 * A shelf record (stored, as the API keeps it, or typed, as a form sends it) as a list of fields.
 * Couplings are keyed by their chemical (a coupling is one per chemical), so reordering them is no change.
 */
export function flattenRecord(record: unknown, type: 'species' | 'chemical' = 'species'): FlatField[] {
  const out: FlatField[] = [];
  const plain = (key: string, label: string, text: string) => out.push({ key, label, text, raw: text });
  const walk = (x: unknown, key: string, label: string) => {
    if (x === undefined) return;
    // a quantity typed as plain text (`"1 um"`) reads like one stored
    const q = asQuantity(x) ?? ((typeof x === 'string' || typeof x === 'number') && kindOfField(key, type) !== null ? { value: String(x), sd: '' } : null);
    if (q) {
      const raw = q.sd ? `${q.value} ± ${q.sd}` : q.value;
      let text = prettyUnits(raw);
      const kind = kindOfField(key, type);
      if (q.si !== undefined && kind) {
        // typed in the unit the bench reads it in: nothing to add; else the bench units beside it
        const unit = formatQuantity(q.si, kind).unit.label;
        const typedUnit = prettyUnits(q.value).replace(/^[\s\d.eE+−-]+/, '').trim();
        if (typedUnit !== unit) text = `${text} (= ${fmtWithSd(q.si, q.siSd ?? 0, kind)})`;
      }
      out.push({ key, label, text, raw });
      if (q.provenance) plain(`${key} provenance`, `${label}: provenance`, provenanceText(q.provenance));
      return;
    }
    if (Array.isArray(x)) {
      if (key === 'couplings') {
        for (const c of x) {
          const chem = isObj(c) ? String(c.chemical) : '?';
          const base = `couplings[${chem}]`;
          plain(base, `${chem} coupling`, 'present');
          if (isObj(c)) for (const [k, v] of Object.entries(c)) if (k !== 'chemical') walk(v, `${base}.${k}`, `${chem} coupling: ${word(k)}`);
        }
        return;
      }
      plain(key, label, x.map((v) => quantityText(v)).join(', '));
      return;
    }
    if (isObj(x)) {
      if (key.endsWith('provenance')) {
        plain(key, label, provenanceText(x));
        return;
      }
      for (const [k, v] of Object.entries(x)) walk(v, key ? `${key}.${k}` : k, label ? `${label}: ${word(k)}` : word(k));
      return;
    }
    plain(key, label, x === null ? '(none)' : String(x));
  };
  walk(record, '', '');
  return out;
}

/** One field that differs between two records. */
export interface FieldChange {
  key: string;
  label: string;
  /** null: the field was absent */
  before: string | null;
  after: string | null;
}

/** Field-by-field differences from `before` to `after` (either may be null: nothing). In the order of `after`, then removed fields. */
export function recordDiff(before: unknown, after: unknown, type: 'species' | 'chemical' = 'species'): FieldChange[] {
  const a = before === null || before === undefined ? [] : flattenRecord(before, type);
  const b = after === null || after === undefined ? [] : flattenRecord(after, type);
  const old = new Map(a.map((f) => [f.key, f]));
  const now = new Map(b.map((f) => [f.key, f]));
  const out: FieldChange[] = [];
  for (const f of b) {
    const o = old.get(f.key);
    if (!o || o.raw !== f.raw) out.push({ key: f.key, label: f.label, before: o ? o.text : null, after: f.text });
  }
  for (const f of a) if (!now.has(f.key)) out.push({ key: f.key, label: f.label, before: f.text, after: null });
  return out;
}

/** A revision as the history shows it (the API's revision, the parts used here). */
export interface RevisionLike {
  revision: number;
  action: string;
  retired: boolean;
  author: string;
  note: string | null;
  createdAt: string;
  record: unknown;
}

/** What one revision changed from the one before it (null for the first): its fields, and a retire or restore. */
export function revisionChanges(prev: RevisionLike | null, rev: RevisionLike, type: 'species' | 'chemical' = 'species'): FieldChange[] {
  const out = recordDiff(prev?.record ?? null, rev.record, type);
  if (prev && prev.retired !== rev.retired) out.unshift({ key: 'retired', label: 'status', before: prev.retired ? 'retired' : 'in use', after: rev.retired ? 'retired' : 'in use' });
  return out;
}

/** Fields side by side (a 409: what the shelf has now and what this form would save). */
export interface SideBySide {
  key: string;
  label: string;
  /** what the form was based on (the revision opened) */
  base: string | null;
  theirs: string | null;
  mine: string | null;
  /** the shelf's value and the form's are the same as typed */
  same: boolean;
  /** who changed it since the form was opened: them, me, both (to different values) or neither */
  changedBy: 'them' | 'me' | 'both' | 'neither';
}

/**
 * A stale save's fields side by side: the revision the form was based on, the shelf's current one and
 * the form's. Values are compared as typed; shown with their units set and in bench units.
 */
export function sideBySide(base: unknown, theirs: unknown, mine: unknown, type: 'species' | 'chemical' = 'species'): SideBySide[] {
  const b = flattenRecord(base, type);
  const t = flattenRecord(theirs, type);
  const m = flattenRecord(mine, type);
  const bm = new Map(b.map((f) => [f.key, f]));
  const tm = new Map(t.map((f) => [f.key, f]));
  const mm = new Map(m.map((f) => [f.key, f]));
  const keys: { key: string; label: string }[] = [];
  const seen = new Set<string>();
  for (const f of [...t, ...m, ...b])
    if (!seen.has(f.key)) {
      seen.add(f.key);
      keys.push({ key: f.key, label: f.label });
    }
  return keys.map(({ key, label }) => {
    const [x, y, z] = [bm.get(key), tm.get(key), mm.get(key)];
    const theyChanged = (x?.raw ?? null) !== (y?.raw ?? null);
    const iChanged = (x?.raw ?? null) !== (z?.raw ?? null);
    const same = (y?.raw ?? null) === (z?.raw ?? null);
    const changedBy = theyChanged && iChanged ? (same ? 'them' : 'both') : theyChanged ? 'them' : iChanged ? 'me' : 'neither';
    return { key, label, base: x?.text ?? null, theirs: y?.text ?? null, mine: z?.text ?? null, same, changedBy };
  });
}

/**
 * A problem's path from the API (`record.couplings[0].mobility`, `record.diffusivity.sd`) as the key of a
 * form field (`couplings.0.mobility`, `diffusivity`): `record.` dropped, indices as segments, and an
 * `.sd` or `.value` of a quantity folded into the quantity's own field. Returns the longest of `known`
 * that the path starts with, or null.
 */
export function fieldForProblem(path: string, known: readonly string[]): string | null {
  const p = path
    .replace(/^(body\.)?record\.?/, '')
    .replace(/\[(\d+)\]/g, '.$1')
    .replace(/^\./, '');
  let best: string | null = null;
  for (const k of known) if ((p === k || p.startsWith(`${k}.`)) && (best === null || k.length > best.length)) best = k;
  return best;
}

/** An import's 409 conflicts, one sentence each. */
export interface ImportConflict {
  path: string;
  type: 'chemical' | 'species';
  id: string;
  exportedRevision: number | null;
  currentRevision: number;
}

export function conflictWords(c: ImportConflict): string {
  const what = `${c.type === 'chemical' ? 'Chemical' : 'Species'} “${c.id}” (${c.path})`;
  if (c.exportedRevision === null) return `${what}: the file's entry differs from the shelf's revision ${c.currentRevision} and does not say which revision it was based on.`;
  if (c.exportedRevision > c.currentRevision) return `${what}: the file says revision ${c.exportedRevision}, but the shelf has only reached revision ${c.currentRevision} — it comes from another database or was edited by hand.`;
  return `${what}: the file was exported at revision ${c.exportedRevision}; the shelf has since been changed (now revision ${c.currentRevision}). Importing would undo that change.`;
}

export { problemWords } from '../lib/words.js';
