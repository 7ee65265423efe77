/**
 * Outcomes of a plan's bench sheet (docs/model.md §12): what each tube did, entered as
 *   - JSON `{ sheet?: <sheet options>, tubes: [{ tube, state, onsetTime?, patternLength?, notes? }], author?, note?, baseRevision? }`
 *     (onsetTime "12 min" or seconds, patternLength "0.4 mm" or metres);
 *   - the filled-in sheet's own JSON (its `observations`: stateSeen, onsetTime, patternLength, notes per tube; its
 *     `request` holds the options it was printed with, and `sheet` beside it overrides them);
 *   - CSV (`tube, state, onset [min], length [um], notes`, columns found by name, units in brackets), with the
 *     sheet options, author, note and baseRevision in the query string.
 * The sheet is rebuilt from the plan with those options (sheetService.build) to check every tube code and to record
 * each tube's kind and delivered dose; tubes without a state are not observed and are listed, never read as stable.
 *
 * The empirical threshold: the tubes on the dose path (the series and the no-dopant control) → crossed the plan's
 * boundary or not (stationary, oscillatory, any = either, restore = stable), `unclear` left out and counted, fitted
 * by engine/fit/quantal.ts.
 */
import { parse } from 'csv-parse/sync';
import { z } from 'zod';
import { fitQuantal, type QuantalFit, type QuantalLink, type QuantalScale } from '../engine/fit/quantal.js';
import type { Boundary, CandidateResult } from '../engine/planner.js';
import { issueList } from '../schema/mixture.js';
import { InputError, type Problem } from '../shelf/errors.js';
import type { PlansRepository } from '../store/plans.js';
import { StaleRevisionError, type Revision } from '../store/shelf.js';
import { OUTCOME_STATES, type OutcomeSet, type OutcomeState, type OutcomeTube, type OutcomesRepository } from '../store/outcomes.js';
import { DIMENSIONS, parseQuantity, UnitError } from '../units/index.js';
import type { SheetService } from './service.js';
import type { Sheet } from './sheet.js';

/** One entered row before validation against the sheet; `at` names where it came from (tubes[2], line 4, observations[7]). */
interface EnteredRow {
  at: string;
  /** the field names of this form, for the problem paths */
  fields: { tube: string; state: string; onsetTime: string; patternLength: string };
  tube: string;
  state: string | null;
  onsetTime: number | null;
  patternLength: number | null;
  notes: string;
}

export interface OutcomeEntry {
  /** the sheet options as sent (units as typed) */
  sheet: Record<string, unknown>;
  rows: EnteredRow[];
  author?: string;
  note?: string;
  baseRevision?: number;
  /** a filled-in sheet: its tubes as printed, to compare with the rebuilt sheet */
  printed?: Sheet['tubes'];
}

const MAX_ROWS = 2000;
const numberOrText = z.union([z.number(), z.string().max(100)]).nullable().optional();
const tubeEntrySchema = z.strictObject({
  tube: z.string().min(1).max(32),
  state: z.string().max(40).nullable().optional(),
  onsetTime: numberOrText,
  patternLength: numberOrText,
  notes: z.string().max(4000).nullable().optional(),
});
const meta = {
  author: z.string().min(1).max(200).optional(),
  note: z.string().max(2000).optional(),
  baseRevision: z.number().int().min(0).optional(),
};
const jsonEntrySchema = z.strictObject({ sheet: z.record(z.string(), z.unknown()).optional(), tubes: z.array(tubeEntrySchema).min(1).max(MAX_ROWS), ...meta });

/** "12 min" | 720 → seconds; "0.4 mm" | 4e-4 → metres; null/"" → null. Problems name the path. */
function physical(raw: unknown, kind: 'time' | 'length', path: string, problems: Problem[]): number | null {
  if (raw === null || raw === undefined || (typeof raw === 'string' && raw.trim() === '')) return null;
  const dim = kind === 'time' ? DIMENSIONS.time : DIMENSIONS.length;
  try {
    const q = parseQuantity(raw, { dimension: dim, sign: 'any' }, path);
    if (!Number.isFinite(q.value)) throw new UnitError(path, 'not a finite number');
    if (kind === 'time' && q.value < 0) problems.push({ path, message: `an onset time cannot be negative, got ${JSON.stringify(raw)}` });
    else if (kind === 'length' && !(q.value > 0)) problems.push({ path, message: `a pattern length must be positive, got ${JSON.stringify(raw)}` });
    return q.value;
  } catch (e) {
    if (e instanceof UnitError) problems.push({ path, message: `${e.reason} (${kind === 'time' ? 'e.g. "12 min" or seconds' : 'e.g. "0.4 mm" or metres'})` });
    else throw e;
    return null;
  }
}

const JSON_FIELDS = { tube: 'tube', state: 'state', onsetTime: 'onsetTime', patternLength: 'patternLength' };
const SHEET_FIELDS = { tube: 'tube', state: 'stateSeen', onsetTime: 'onsetTime', patternLength: 'patternLength' };

/** Read the JSON form or a filled-in sheet. */
export function readJsonEntry(body: unknown, query: QueryMeta = {}): OutcomeEntry {
  if (body === null || typeof body !== 'object' || Array.isArray(body)) throw new InputError([{ path: 'body', message: 'expected { sheet?, tubes: [...] }, a filled-in sheet (JSON with observations), or CSV (content type text/csv)' }]);
  const o = body as Record<string, unknown>;
  const problems: Problem[] = [];
  if (Array.isArray(o.observations)) {
    // a filled-in sheet: its observations, its own options (request) unless `sheet` is given beside them
    const obs = o.observations as unknown[];
    if (obs.length > MAX_ROWS) throw new InputError([{ path: 'observations', message: `at most ${MAX_ROWS} tubes, got ${obs.length}` }]);
    const rows: EnteredRow[] = [];
    obs.forEach((raw, i) => {
      const at = `observations[${i}]`;
      const r = z.object({ tube: z.string().min(1).max(32), stateSeen: z.string().max(40).nullable().optional(), onsetTime: numberOrText, patternLength: numberOrText, notes: z.string().max(4000).nullable().optional() }).safeParse(raw);
      if (!r.success) {
        problems.push(...issueList(r.error, [at]));
        return;
      }
      const v = r.data;
      rows.push({ at, fields: SHEET_FIELDS, tube: v.tube, state: v.stateSeen ?? null, onsetTime: physical(v.onsetTime, 'time', `${at}.onsetTime`, problems), patternLength: physical(v.patternLength, 'length', `${at}.patternLength`, problems), notes: v.notes ?? '' });
    });
    const sheetOpt = o.sheet ?? o.request;
    if (sheetOpt !== undefined && (sheetOpt === null || typeof sheetOpt !== 'object' || Array.isArray(sheetOpt))) problems.push({ path: o.sheet !== undefined ? 'sheet' : 'request', message: 'expected the sheet options as an object' });
    const m = z.strictObject(meta).partial().safeParse({ author: o.author ?? query.author ?? (o.options as { operator?: unknown } | undefined)?.operator ?? undefined, note: o.note ?? query.note, baseRevision: o.baseRevision ?? query.baseRevision });
    if (!m.success) problems.push(...issueList(m.error));
    if (problems.length > 0) throw new InputError(problems);
    if (sheetOpt === undefined) {
      throw new InputError([{ path: 'request', message: 'this sheet carries no request (the options it was printed with): send them beside the observations as "sheet": { … }' }]);
    }
    return {
      sheet: sheetOpt as Record<string, unknown>,
      rows,
      ...(m.data!.author !== undefined ? { author: m.data!.author } : {}),
      ...(m.data!.note !== undefined ? { note: m.data!.note } : {}),
      ...(m.data!.baseRevision !== undefined ? { baseRevision: m.data!.baseRevision } : {}),
      ...(Array.isArray(o.tubes) ? { printed: o.tubes as Sheet['tubes'] } : {}),
    };
  }
  const r = jsonEntrySchema.safeParse({ ...o, ...(o.author === undefined && query.author !== undefined ? { author: query.author } : {}), ...(o.note === undefined && query.note !== undefined ? { note: query.note } : {}), ...(o.baseRevision === undefined && query.baseRevision !== undefined ? { baseRevision: query.baseRevision } : {}) });
  if (!r.success) throw new InputError(issueList(r.error));
  const v = r.data;
  const rows = v.tubes.map((t, i): EnteredRow => {
    const at = `tubes[${i}]`;
    return { at, fields: JSON_FIELDS, tube: t.tube, state: t.state ?? null, onsetTime: physical(t.onsetTime, 'time', `${at}.onsetTime`, problems), patternLength: physical(t.patternLength, 'length', `${at}.patternLength`, problems), notes: t.notes ?? '' };
  });
  if (problems.length > 0) throw new InputError(problems);
  return { sheet: v.sheet ?? query.sheet ?? {}, rows, ...(v.author !== undefined ? { author: v.author } : {}), ...(v.note !== undefined ? { note: v.note } : {}), ...(v.baseRevision !== undefined ? { baseRevision: v.baseRevision } : {}) };
}

export interface QueryMeta {
  sheet?: Record<string, unknown>;
  author?: string;
  note?: string;
  baseRevision?: number;
}

const HEADER = /^\s*([^[\]]*?)\s*(?:\[([^\]]*)\])?\s*$/;
const COLUMN_NAMES: Record<string, 'tube' | 'state' | 'onset' | 'length' | 'notes'> = {
  tube: 'tube',
  code: 'tube',
  state: 'state',
  'state seen': 'state',
  onset: 'onset',
  'onset time': 'onset',
  length: 'length',
  'pattern length': 'length',
  notes: 'notes',
  note: 'notes',
};

/** A tube whose state seen is not the sheet's expectation for it (controls included: the update does not use them). */
export interface Disagreement {
  tube: string;
  kind: string;
  expected: string;
  seen: string;
  message: string;
}

/**
 * Where the bench saw another state than the sheet expected, tube by tube. The update weighs the series and the
 * no-dopant control; the other controls (no fuel, dopant alone) are other mixtures it does not model, so their
 * disagreements are said here, at entry, and not lost.
 */
export function disagreements(sheet: Sheet, tubes: OutcomeTube[]): Disagreement[] {
  const expectedOf = new Map<string, string>();
  for (const t of sheet.tubes) {
    const o = sheet.outcomes.find((x) => x.tube === t.code);
    if (o?.state) for (const lid of t.tubes) expectedOf.set(lid, o.state);
  }
  const out: Disagreement[] = [];
  for (const t of tubes) {
    const expected = expectedOf.get(t.tube);
    if (!expected || t.state === 'unclear' || t.state === expected) continue;
    const control = t.kind === 'no-fuel' || t.kind === 'dopant-alone';
    out.push({
      tube: t.tube,
      kind: t.kind,
      expected,
      seen: t.state,
      message: `${t.tube}: the sheet expected ${expected}, the bench saw ${t.state}${control ? ' — a control of another mixture, which the model update does not weigh: the model or the shelf may be off for it' : ''}`,
    });
  }
  return out;
}

/** Read the CSV form: columns by name (tube, state, onset [unit], length [unit], notes); every problem names its line and column. */
export function readCsvEntry(text: string, query: QueryMeta = {}): OutcomeEntry {
  // the row bound before any parsing (this runs in the request): counting line ends is cheap, parsing 300,000 rows is not
  let lineEnds = 0;
  for (let i = text.indexOf('\n'); i !== -1 && lineEnds <= MAX_ROWS + 1; i = text.indexOf('\n', i + 1)) lineEnds++;
  if (lineEnds > MAX_ROWS + 1) throw new InputError([{ path: 'data', message: `at most ${MAX_ROWS} tubes (lines after the header), got more` }]);
  let records: { record: string[]; info: { lines: number } }[];
  try {
    records = parse(text, { bom: true, info: true, skip_empty_lines: true, trim: true, relax_column_count: true }) as never;
  } catch (e) {
    const err = e as { lines?: number; message: string };
    throw new InputError([{ path: err.lines ? `line ${err.lines}` : 'csv', message: err.message }]);
  }
  if (records.length === 0) throw new InputError([{ path: 'line 1', message: 'the file is empty: expected a header row "tube, state, onset [min], length [um], notes"' }]);
  const head = records[0]!.record;
  const problems: Problem[] = [];
  const cols: Partial<Record<'tube' | 'state' | 'onset' | 'length' | 'notes', { index: number; unit: string | null; header: string }>> = {};
  head.forEach((h, j) => {
    const m = HEADER.exec(h);
    const name = (m?.[1] ?? h).trim().toLowerCase();
    const unit = m?.[2] !== undefined && m[2].trim() !== '' ? m[2].trim() : null;
    const role = COLUMN_NAMES[name];
    if (!role) problems.push({ path: `line 1, column ${j + 1} (${h})`, message: 'unknown column: expected tube, state, onset [unit], length [unit], notes' });
    else if (cols[role]) problems.push({ path: `line 1, column ${j + 1} (${h})`, message: `a second ${role} column` });
    else cols[role] = { index: j, unit, header: h };
  });
  for (const need of ['tube', 'state'] as const) if (!cols[need]) problems.push({ path: 'line 1', message: `no ${need} column (expected tube, state, onset [min], length [um], notes)` });
  for (const [role, dim] of [['onset', DIMENSIONS.time], ['length', DIMENSIONS.length]] as const) {
    const c = cols[role];
    if (!c) continue;
    if (c.unit === null) problems.push({ path: `line 1, column ${c.index + 1} (${c.header})`, message: `give the ${role === 'onset' ? 'onset time' : 'pattern length'}'s unit in brackets, e.g. "${role} [${role === 'onset' ? 'min' : 'um'}]"` });
    else {
      try {
        parseQuantity(`1 ${c.unit}`, { dimension: dim, sign: 'positive' }, '');
      } catch {
        problems.push({ path: `line 1, column ${c.index + 1} (${c.header})`, message: `the ${role} needs a unit of ${role === 'onset' ? 'time (min, s, h)' : 'length (um, mm)'}, got "${c.unit}"` });
      }
    }
  }
  if (problems.length > 0) throw new InputError(problems);
  if (records.length - 1 > MAX_ROWS) throw new InputError([{ path: 'data', message: `at most ${MAX_ROWS} tubes, got ${records.length - 1}` }]);
  const rows: EnteredRow[] = [];
  for (const { record, info } of records.slice(1)) {
    const at = `line ${info.lines}`;
    const cell = (role: keyof typeof cols) => {
      const c = cols[role];
      return c ? (record[c.index] ?? '').trim() : '';
    };
    const colPath = (role: keyof typeof cols) => `${at}, column ${cols[role]!.index + 1} (${cols[role]!.header})`;
    const withUnit = (role: 'onset' | 'length') => {
      const v = cell(role);
      if (v === '') return null;
      const c = cols[role]!;
      return /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(v) ? `${v} ${c.unit}` : v;
    };
    rows.push({
      at,
      fields: { tube: colPath('tube').replace(`${at}, `, ''), state: colPath('state').replace(`${at}, `, ''), onsetTime: cols.onset ? colPath('onset').replace(`${at}, `, '') : 'onset', patternLength: cols.length ? colPath('length').replace(`${at}, `, '') : 'length' },
      tube: cell('tube'),
      state: cell('state') === '' ? null : cell('state'),
      onsetTime: cols.onset ? physical(withUnit('onset'), 'time', colPath('onset'), problems) : null,
      patternLength: cols.length ? physical(withUnit('length'), 'length', colPath('length'), problems) : null,
      notes: cell('notes'),
    });
  }
  if (problems.length > 0) throw new InputError(problems);
  return { sheet: query.sheet ?? {}, rows, ...(query.author !== undefined ? { author: query.author } : {}), ...(query.note !== undefined ? { note: query.note } : {}), ...(query.baseRevision !== undefined ? { baseRevision: query.baseRevision } : {}) };
}

/** A row's field path: `tubes[2].state`, `observations[4].stateSeen`, `line 5, column 2 (state)`. */
const pathOf = (r: EnteredRow, f: keyof EnteredRow['fields']) => (r.at.startsWith('line ') ? `${r.at}, ${r.fields[f]}` : `${r.at}.${r.fields[f]}`);

/** Validate the rows against a built sheet: codes, duplicates, states, consistency. @returns the tubes in the sheet's order, and the lids left without a state */
export function validateRows(rows: EnteredRow[], sheet: Sheet): { tubes: OutcomeTube[]; unobserved: string[] } {
  const lids = new Map<string, { kind: string; dose: number | null; order: number }>();
  let order = 0;
  for (const t of sheet.tubes) for (const lid of t.tubes) lids.set(lid, { kind: t.kind, dose: t.doseSi, order: order++ });
  const problems: Problem[] = [];
  const seen = new Map<string, string>();
  const out: (OutcomeTube & { order: number })[] = [];
  const known = [...lids.keys()];
  for (const r of rows) {
    const code = r.tube.trim();
    const lid = lids.get(code);
    const empty = r.state === null && r.onsetTime === null && r.patternLength === null && r.notes.trim() === '';
    if (!lid) {
      problems.push({ path: pathOf(r, 'tube'), message: `unknown tube code ${JSON.stringify(code)}: this sheet (candidate ${sheet.candidate.id}, ${sheet.options.replicates} replicate${sheet.options.replicates === 1 ? '' : 's'}) has ${known.length <= 12 ? known.join(', ') : `${known.slice(0, 6).join(', ')} … ${known.slice(-3).join(', ')} (${known.length} tubes)`}` });
      continue;
    }
    if (empty) continue; // a blank row of a printed sheet: not observed
    if (seen.has(code)) {
      problems.push({ path: pathOf(r, 'tube'), message: `tube ${code} is entered twice (also at ${seen.get(code)})` });
      continue;
    }
    seen.set(code, r.at);
    const state = r.state?.trim().toLowerCase() ?? null;
    if (state === null) {
      problems.push({ path: pathOf(r, 'state'), message: `missing: tube ${code} has an onset, length or notes but no state (one of ${OUTCOME_STATES.join(', ')})` });
      continue;
    }
    if (!OUTCOME_STATES.includes(state as OutcomeState)) {
      problems.push({ path: pathOf(r, 'state'), message: `expected one of ${OUTCOME_STATES.join(', ')}, got ${JSON.stringify(r.state)}` });
      continue;
    }
    if (state === 'stable' && (r.onsetTime !== null || r.patternLength !== null)) {
      problems.push({ path: pathOf(r, r.onsetTime !== null ? 'onsetTime' : 'patternLength'), message: `tube ${code} is entered as stable but with ${r.onsetTime !== null ? 'an onset time' : 'a pattern length'}: a stable tube shows no pattern (enter it as unclear, with a note, if something was seen)` });
      continue;
    }
    out.push({ tube: code, kind: lid.kind, dose: lid.dose, state: state as OutcomeState, onsetTime: r.onsetTime, patternLength: r.patternLength, notes: r.notes, order: lid.order });
  }
  if (problems.length > 0) throw new InputError(problems);
  if (out.length === 0) throw new InputError([{ path: rows[0]?.at ?? 'tubes', message: 'no tube has a state: nothing to record' }]);
  out.sort((a, b) => a.order - b.order);
  const unobserved = known.filter((k) => !seen.has(k));
  return { tubes: out.map(({ order: _o, ...t }) => t), unobserved };
}

/** Whether a tube's state is past the plan's boundary (planner.ts Boundary): null for unclear. */
export function crossed(state: OutcomeState, boundary: Boundary): boolean | null {
  if (state === 'unclear') return null;
  if (boundary === 'stationary') return state === 'stationary';
  if (boundary === 'oscillatory') return state === 'oscillatory';
  if (boundary === 'any') return state !== 'stable';
  return state === 'stable'; // restore: the dopant brings an unstable base back to stable
}

export interface DoseResponse {
  planId: number;
  candidate: string;
  outcomesRevision: number;
  boundary: Boundary;
  /** what counts as a response */
  responseIs: string;
  /** tubes on the dose path (series and no-dopant), by delivered dose (m⁻³) */
  groups: { dose: number; dosePerMl: number; tubes: number; responded: number; unclear: number; codes: string[] }[];
  unclear: { count: number; tubes: string[] };
  /** controls of other mixtures (no fuel, dopant alone): not on the dose path, left out of the fit */
  controls: { tube: string; kind: string; state: OutcomeState }[];
  fit: QuantalFit;
  /** the ED50 per mL, as the sheet prints doses */
  ed50PerMl: { value: number | null; interval: { lower: number; upper: number } | null };
  /** the plan's own prediction for this candidate (m⁻³): threshold and Monte Carlo band */
  predicted: { threshold: number | null; anyDose: boolean; p05: number | null; median: number | null; p95: number | null } | null;
  notes: string[];
}

/** The empirical threshold of an outcome set (see the header). */
export function doseResponse(set: OutcomeSet, boundary: Boundary, cand: CandidateResult | null, link: QuantalLink = 'logit', scale: QuantalScale = 'log10'): DoseResponse {
  const groups = new Map<number, DoseResponse['groups'][number]>();
  const unclear: string[] = [];
  const controls: DoseResponse['controls'] = [];
  for (const t of set.tubes) {
    if (t.kind !== 'series' && t.kind !== 'no-dopant') {
      controls.push({ tube: t.tube, kind: t.kind, state: t.state });
      continue;
    }
    const dose = t.dose ?? 0;
    const g = groups.get(dose) ?? { dose, dosePerMl: dose * 1e-6, tubes: 0, responded: 0, unclear: 0, codes: [] };
    groups.set(dose, g);
    const c = crossed(t.state, boundary);
    if (c === null) {
      g.unclear++;
      unclear.push(t.tube);
      continue;
    }
    g.tubes++;
    if (c) g.responded++;
    g.codes.push(t.tube);
  }
  const gs = [...groups.values()].sort((a, b) => a.dose - b.dose);
  const used = gs.filter((g) => g.tubes > 0);
  const fit = fitQuantal(used.map((g) => g.dose), used.map((g) => g.tubes), used.map((g) => g.responded), { link, scale, doseUnit: '1/m^3' });
  const notes: string[] = [];
  if (unclear.length > 0) notes.push(`${unclear.length} tube${unclear.length === 1 ? '' : 's'} entered as unclear (${unclear.join(', ')}): left out of the fit, neither crossed nor not`);
  if (controls.length > 0) notes.push(`controls of other mixtures (${controls.map((c) => `${c.tube} ${c.kind}`).join(', ')}) are not on the dose path: left out of the fit`);
  const e = fit.parameters.ed50;
  const b = cand?.band ?? null;
  return {
    planId: set.planId,
    candidate: set.candidate,
    outcomesRevision: set.revision,
    boundary,
    responseIs: { stationary: 'state seen stationary', oscillatory: 'state seen oscillatory', any: 'state seen stationary or oscillatory', restore: 'state seen stable' }[boundary],
    groups: gs,
    unclear: { count: unclear.length, tubes: unclear },
    controls,
    fit,
    ed50PerMl: {
      value: e.value === null ? null : e.value * 1e-6,
      interval: e.interval ? { lower: e.interval.lower * 1e-6, upper: e.interval.upper * 1e-6 } : null,
      // no fit (separation): the doses, per mL, between which the switch lies
      ...(e.bracket ? { bracket: { from: e.bracket.from === null ? null : e.bracket.from * 1e-6, to: e.bracket.to === null ? null : e.bracket.to * 1e-6 } } : {}),
    },
    predicted: cand ? { threshold: cand.threshold?.density ?? null, anyDose: Boolean(cand.anyDose), p05: b?.p05 ?? null, median: b?.median ?? null, p95: b?.p95 ?? null } : null,
    notes,
  };
}

export function outcomesService(plans: PlansRepository, sheets: SheetService, repo: OutcomesRepository) {
  /** The base revision of a write: as sent; when none was sent, 0 if there is none yet, else a 409 asking for it. */
  const baseOf = (planId: number, candidate: string, sent: number | undefined) => {
    if (sent !== undefined) return sent;
    const cur = repo.current(planId, candidate);
    if (!cur) return 0;
    throw new StaleRevisionError(`outcomes of plan ${planId} for ${candidate} exist (revision ${cur.revision}): send baseRevision ${cur.revision} to write the next revision (on the command line: --base-revision ${cur.revision})`, cur as unknown as Revision);
  };
  const planCandidates = (planId: number) => (plans.get(planId).result as { candidates: CandidateResult[] }).candidates;
  return {
    repo,
    /**
     * Validate an entry against the plan's rebuilt sheet and store it as the next revision.
     * @throws InputError (400), NotFoundError (404), SheetNotFitError (422), StaleRevisionError (409)
     */
    record(planId: number, entry: OutcomeEntry): OutcomeSet & { unobserved: string[]; disagreements: Disagreement[] } {
      plans.get(planId); // 404 first
      let sheet: Sheet;
      try {
        sheet = sheets.build(planId, entry.sheet, '1970-01-01T00:00:00.000Z');
      } catch (e) {
        if (e instanceof InputError) throw new InputError(e.problems.map((p) => ({ path: p.path ? `sheet.${p.path}` : 'sheet', message: p.message })));
        throw e;
      }
      if (entry.printed) {
        // a filled-in sheet: the rebuilt tubes must be the ones it printed (same codes, same delivered doses)
        const rebuilt = new Map(sheet.tubes.map((t) => [t.code, t]));
        const problems: Problem[] = [];
        entry.printed.forEach((raw, i) => {
          const p = (raw !== null && typeof raw === 'object' ? raw : {}) as Partial<Sheet['tubes'][number]>;
          const r = typeof p.code === 'string' ? rebuilt.get(p.code) : undefined;
          if (!r) problems.push({ path: `tubes[${i}].code`, message: `the sheet printed tube ${JSON.stringify(p.code ?? null)}, which its options (request) do not rebuild: send the options it was printed with as "sheet"` });
          else if ((p.dose?.value ?? null) !== (r.dose?.value ?? null))
            problems.push({ path: `tubes[${i}].dose`, message: `tube ${p.code} was printed with ${p.dose?.value ?? 'no'} particles/mL, its options rebuild ${r.dose?.value ?? 'none'}: the plan or the options differ from the printed sheet's` });
        });
        if (problems.length > 0) throw new InputError(problems);
      }
      const { tubes, unobserved } = validateRows(entry.rows, sheet);
      const candidate = sheet.candidate.id;
      const set = repo.write(
        {
          planId,
          candidate,
          sheetOptions: { ...entry.sheet, candidate },
          tubes,
          ...(entry.author !== undefined ? { author: entry.author } : {}),
          ...(entry.note !== undefined ? { note: entry.note } : {}),
        },
        baseOf(planId, candidate, entry.baseRevision),
      );
      return { ...set, unobserved, disagreements: disagreements(sheet, tubes) };
    },
    /** The current set (of a candidate, or the latest written) and every revision. */
    list(planId: number, candidate?: string) {
      plans.get(planId);
      return { planId, current: repo.current(planId, candidate), history: repo.history(planId) };
    },
    /** The empirical threshold of a revision (default the current) of a candidate's (default the latest) outcomes. */
    doseResponse(planId: number, q: { candidate?: string; revision?: number; link?: QuantalLink; scale?: QuantalScale }): DoseResponse {
      const plan = plans.get(planId);
      const cur = repo.current(planId, q.candidate);
      const set = cur && q.revision !== undefined ? repo.revision(planId, cur.candidate, q.revision) : cur;
      if (!set) throw new InputError([{ path: q.revision !== undefined ? 'revision' : 'candidate', message: q.revision !== undefined ? `no outcomes revision ${q.revision} for plan ${planId}${q.candidate ? ` and ${q.candidate}` : ''}` : `no outcomes entered for plan ${planId}${q.candidate ? ` and candidate ${q.candidate}` : ''}: POST them to /api/plans/${planId}/outcomes first` }]);
      const boundary = (plan.request as { boundary: Boundary }).boundary;
      const cand = planCandidates(planId).find((c) => c.species === set.candidate) ?? null;
      return doseResponse(set, boundary, cand, q.link, q.scale);
    },
  };
}
export type OutcomesService = ReturnType<typeof outcomesService>;
