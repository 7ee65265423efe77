/**
 * The Shelf pages' logic that needs no page: a shelf record flattened into labelled fields (as typed),
 * the differences between two revisions field by field, problems of a refused save matched to the
 * fields they name, and an import's conflicts in words. Pure (no DOM), so tests/web/shelf-logic.test.ts
 * checks it in node.
 */

/** One field of a record, as a person reads it. */
export interface FlatField {
  /** a stable key: `diffusivity`, `couplings[h2o2].mobility`, `diffusivity provenance` */
  key: string;
  /** words: `diffusivity`, `h2o2 coupling: mobility`, `diffusivity: provenance` */
  label: string;
  /** the value as typed (`0.22 um^2/s ± 0.02 um^2/s`) */
  text: string;
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
function asQuantity(x: unknown): { value: string; sd: string; provenance?: Obj } | null {
  if (!isObj(x)) return null;
  if (typeof x.si === 'number' && 'input' in x) {
    return { value: String(x.input), sd: x.sdInput === undefined || x.sdInput === null ? '' : String(x.sdInput), ...(isObj(x.provenance) ? { provenance: x.provenance } : {}) };
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
export function flattenRecord(record: unknown): FlatField[] {
  const out: FlatField[] = [];
  const walk = (x: unknown, key: string, label: string) => {
    if (x === undefined) return;
    const q = asQuantity(x);
    if (q) {
      out.push({ key, label, text: q.sd ? `${q.value} ± ${q.sd}` : q.value });
      if (q.provenance) out.push({ key: `${key} provenance`, label: `${label}: provenance`, text: provenanceText(q.provenance) });
      return;
    }
    if (Array.isArray(x)) {
      if (key === 'couplings') {
        for (const c of x) {
          const chem = isObj(c) ? String(c.chemical) : '?';
          const base = `couplings[${chem}]`;
          out.push({ key: base, label: `${chem} coupling`, text: 'present' });
          if (isObj(c)) for (const [k, v] of Object.entries(c)) if (k !== 'chemical') walk(v, `${base}.${k}`, `${chem} coupling: ${word(k)}`);
        }
        return;
      }
      out.push({ key, label, text: x.map((v) => quantityText(v)).join(', ') });
      return;
    }
    if (isObj(x)) {
      if (key.endsWith('provenance')) {
        out.push({ key, label, text: provenanceText(x) });
        return;
      }
      for (const [k, v] of Object.entries(x)) walk(v, key ? `${key}.${k}` : k, label ? `${label}: ${word(k)}` : word(k));
      return;
    }
    out.push({ key, label, text: x === null ? '(none)' : String(x) });
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
export function recordDiff(before: unknown, after: unknown): FieldChange[] {
  const a = before === null || before === undefined ? [] : flattenRecord(before);
  const b = after === null || after === undefined ? [] : flattenRecord(after);
  const old = new Map(a.map((f) => [f.key, f]));
  const now = new Map(b.map((f) => [f.key, f]));
  const out: FieldChange[] = [];
  for (const f of b) {
    const o = old.get(f.key);
    if (!o || o.text !== f.text) out.push({ key: f.key, label: f.label, before: o ? o.text : null, after: f.text });
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
export function revisionChanges(prev: RevisionLike | null, rev: RevisionLike): FieldChange[] {
  const out = recordDiff(prev?.record ?? null, rev.record);
  if (prev && prev.retired !== rev.retired) out.unshift({ key: 'retired', label: 'status', before: prev.retired ? 'retired' : 'in use', after: rev.retired ? 'retired' : 'in use' });
  return out;
}

/** Fields side by side (a 409: what the shelf has now and what this form would save). */
export interface SideBySide {
  key: string;
  label: string;
  theirs: string | null;
  mine: string | null;
  same: boolean;
}

export function sideBySide(theirs: unknown, mine: unknown): SideBySide[] {
  const t = flattenRecord(theirs);
  const m = flattenRecord(mine);
  const tm = new Map(t.map((f) => [f.key, f]));
  const mm = new Map(m.map((f) => [f.key, f]));
  const keys: { key: string; label: string }[] = [];
  const seen = new Set<string>();
  for (const f of [...t, ...m])
    if (!seen.has(f.key)) {
      seen.add(f.key);
      keys.push({ key: f.key, label: f.label });
    }
  return keys.map(({ key, label }) => {
    const a = tm.get(key)?.text ?? null;
    const b = mm.get(key)?.text ?? null;
    return { key, label, theirs: a, mine: b, same: a === b };
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
