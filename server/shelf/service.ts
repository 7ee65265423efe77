/**
 * The shelf's rules on top of the repository: records are validated (units,
 * dimensions, references between species and chemicals) before anything is
 * written; import is all or nothing; a shelf mixture is turned into the
 * engine's SI mixture from current revisions, remembering which ones.
 */
import { z } from 'zod';
import type { Chemical, Mixture, Species } from '../engine/types.js';
import { chamberSchema, conditionsSchema, idRecord, issueList, quantity, toEngineChamber, toEngineConditions } from '../schema/mixture.js';
import {
  amountSchema,
  AmountError,
  chemicalRecordSchema,
  engineChemical,
  engineSpecies,
  keySchema,
  numberDensity,
  referencedChemicals,
  speciesRecordSchema,
  toTypedRecord,
  type ChemicalRecord,
  type ShelfType,
  type SpeciesRecord,
} from '../schema/shelf.js';
import { sameContent, type Revision, type ShelfRepository, type WriteMeta } from '../store/shelf.js';
import { DIMENSIONS } from '../units/index.js';
import { ImportConflictError, InputError, type ImportConflict, type Problem } from './errors.js';
import { LIMITS } from '../schema/limits.js';

export const SHELF_FORMAT = 'brink-shelf';
/**
 * 2: each entry carries `revision`, the revision it was exported at (an import refuses to overwrite
 * a newer one unless asked to); 1: without it (still imported, see importShelf).
 */
export const SHELF_FORMAT_VERSION = 2;
const READABLE_FORMAT_VERSIONS = [1, 2] as const;

type AnyRecord = ChemicalRecord | SpeciesRecord;

function schemaFor(type: ShelfType) {
  return type === 'chemical' ? chemicalRecordSchema : speciesRecordSchema;
}

/** Validate a typed record; throws InputError with every problem, paths prefixed by `prefix`. */
export function parseRecord<T extends ShelfType>(type: T, input: unknown, prefix: PropertyKey[] = []): T extends 'chemical' ? ChemicalRecord : SpeciesRecord {
  const r = schemaFor(type).safeParse(input);
  if (!r.success) throw new InputError(issueList(r.error, prefix));
  return r.data as T extends 'chemical' ? ChemicalRecord : SpeciesRecord;
}

/** Problems with a species' references to chemicals, given the chemical keys that exist. */
function referenceProblems(sp: SpeciesRecord, exists: (key: string) => boolean, prefix: string): Problem[] {
  const out: Problem[] = [];
  sp.couplings.forEach((c, j) => {
    if (!exists(c.chemical)) out.push({ path: `${prefix}couplings[${j}].chemical`, message: `unknown chemical "${c.chemical}"` });
    const a = c.activity;
    if (a !== undefined && 'maxRate' in a && a.product) {
      if (!exists(a.product)) out.push({ path: `${prefix}couplings[${j}].activity.product`, message: `unknown chemical "${a.product}"` });
      if (a.product === c.chemical) out.push({ path: `${prefix}couplings[${j}].activity.product`, message: 'the product must differ from the fuel' });
    }
  });
  return out;
}

function fields(type: ShelfType, record: AnyRecord) {
  return { kind: type === 'species' ? (record as SpeciesRecord).kind : null, name: record.name, record };
}

export function shelfService(repo: ShelfRepository) {
  const chemicalExists = (key: string) => repo.get('chemical', key) !== null;

  function checkReferences(type: ShelfType, record: AnyRecord, prefix: string): void {
    if (type !== 'species') return;
    const problems = referenceProblems(record as SpeciesRecord, chemicalExists, prefix);
    if (problems.length > 0) throw new InputError(problems);
  }

  return {
    repo,

    /** Create from a validated record (see chemicalRecordSchema / speciesRecordSchema). */
    create(type: ShelfType, record: AnyRecord, meta: WriteMeta): Revision<AnyRecord> {
      checkReferences(type, record, 'record.');
      return repo.create(type, record.id, fields(type, record), meta);
    },

    /** A new revision from a validated record, guarded by the revision it was based on. */
    edit(type: ShelfType, key: string, baseRevision: number, record: AnyRecord, meta: WriteMeta): Revision<AnyRecord> {
      repo.mustGet(type, key);
      if (record.id !== key) throw new InputError([{ path: 'record.id', message: `an item's id cannot change (it is "${key}")` }]);
      checkReferences(type, record, 'record.');
      return repo.edit(type, key, baseRevision, fields(type, record), meta);
    },

    /** The whole shelf, current revisions as typed, retired ones flagged. */
    exportShelf() {
      const all = <B>(type: ShelfType) => {
        const out: Revision<B>[] = [];
        for (let offset = 0; ; offset += 500) {
          const page = repo.list<B>(type, { includeRetired: true, limit: 500, offset });
          out.push(...page.items);
          if (out.length >= page.total || page.items.length === 0) break;
        }
        return out.sort((a, b) => (a.id < b.id ? -1 : a.id > b.id ? 1 : 0));
      };
      const entry = (r: Revision<AnyRecord>) => ({ ...(toTypedRecord(r.record) as Record<string, unknown>), ...(r.retired ? { retired: true } : {}), revision: r.revision });
      return {
        format: SHELF_FORMAT,
        version: SHELF_FORMAT_VERSION,
        exportedAt: new Date().toISOString(),
        chemicals: all<ChemicalRecord>('chemical').map(entry),
        species: all<SpeciesRecord>('species').map(entry),
      };
    },

    /**
     * Import a shelf document: every entry is validated first and every problem
     * reported by its path; only then is anything written, in one transaction.
     * New ids are created, changed ones get a new revision, identical ones are left alone.
     *
     * An entry carries the revision it was exported at (`revision`, format version 2). When the
     * item has changed since (its current revision is higher) and the entry differs from it, the
     * import would undo that edit: unless `options.overwrite`, nothing is written and every such
     * entry is listed (ImportConflictError → 409 import-conflict). An entry without `revision`
     * (an export of format version 1, or a hand-written file such as the demo shelf) cannot show
     * what it was based on: it conflicts whenever its item exists and differs. Revision numbers
     * are those of the shelf the export came from; into another database they are compared as
     * numbers all the same (an entry exported at a revision at or above the item's here revises it).
     * Identical entries are never conflicts; with overwrite, the new revision's note names the
     * revision it replaced.
     */
    importShelf(doc: unknown, meta: WriteMeta, options: { overwrite?: boolean } = {}) {
      const problems: Problem[] = [];
      const envelope = z
        .strictObject({
          format: z.literal(SHELF_FORMAT),
          version: z.union(READABLE_FORMAT_VERSIONS.map((v) => z.literal(v))),
          exportedAt: z.string().max(100).optional(),
          chemicals: z.array(z.unknown()).max(LIMITS.importEntries).default([]),
          species: z.array(z.unknown()).max(LIMITS.importEntries).default([]),
        })
        .safeParse(doc);
      if (!envelope.success) throw new InputError(issueList(envelope.error));
      const parsed: { type: ShelfType; record: AnyRecord; retired: boolean; revision: number | null; index: number }[] = [];
      // ids declared in the document, valid entries or not (so one bad chemical does not cascade)
      const declared = new Set<string>();
      for (const raw of envelope.data.chemicals) if (typeof (raw as { id?: unknown })?.id === 'string') declared.add((raw as { id: string }).id);
      const seen = { chemical: new Set<string>(), species: new Set<string>() };
      const take = (type: ShelfType, list: unknown[], name: string) => {
        list.forEach((raw, i) => {
          let retired = false;
          let revision: number | null = null;
          let body = raw;
          if (raw !== null && typeof raw === 'object' && 'retired' in raw) {
            const { retired: flag, ...rest } = raw as Record<string, unknown>;
            if (typeof flag !== 'boolean') problems.push({ path: `${name}[${i}].retired`, message: 'must be true or false' });
            retired = flag === true;
            body = rest;
          }
          if (body !== null && typeof body === 'object' && 'revision' in body) {
            const { revision: r, ...rest } = body as Record<string, unknown>;
            if (typeof r !== 'number' || !Number.isInteger(r) || r < 1) problems.push({ path: `${name}[${i}].revision`, message: 'the revision it was exported at: a whole number from 1' });
            else revision = r;
            body = rest;
          }
          try {
            const record = parseRecord(type, body, [name, i]);
            if (seen[type].has(record.id)) problems.push({ path: `${name}[${i}].id`, message: `duplicate id "${record.id}" in this import` });
            seen[type].add(record.id);
            parsed.push({ type, record, retired, revision, index: i });
          } catch (e) {
            if (e instanceof InputError) for (const q of e.problems) problems.push(q); // a loop: a spread of 200,000 problems overflows the stack
            else throw e;
          }
        });
      };
      take('chemical', envelope.data.chemicals, 'chemicals');
      take('species', envelope.data.species, 'species');
      const exists = (key: string) => declared.has(key) || chemicalExists(key);
      parsed.forEach((p) => {
        if (p.type === 'species') for (const q of referenceProblems(p.record as SpeciesRecord, exists, `species[${p.index}].`)) problems.push(q);
      });
      if (problems.length > 0) throw new InputError(problems);
      const summary = { created: 0, revised: 0, unchanged: 0, overwritten: 0 };
      // the check and the writes under one write lock (BEGIN IMMEDIATE): no edit slips in between
      repo.transaction(() => {
        const conflicts: ImportConflict[] = [];
        const replaced = new Map<(typeof parsed)[number], number>();
        for (const p of parsed) {
          const cur = repo.get(p.type, p.record.id);
          if (!cur || sameContent(cur, { ...fields(p.type, p.record), retired: p.retired })) continue;
          // based on the shelf's current revision: an ordinary edit. A newer shelf revision would be undone; an exported
          // revision above the shelf's cannot come from this database (another one, or an edited file): both conflict.
          if (p.revision !== null && cur.revision === p.revision) continue;
          replaced.set(p, cur.revision);
          const path = `${p.type === 'chemical' ? 'chemicals' : 'species'}[${p.index}]`;
          conflicts.push({ path, type: p.type, id: p.record.id, exportedRevision: p.revision, currentRevision: cur.revision });
        }
        if (conflicts.length > 0 && !options.overwrite) throw new ImportConflictError(conflicts);
        for (const p of parsed) {
          const over = replaced.get(p);
          const note = over === undefined ? meta.note : `${meta.note ?? 'import'}; replaced revision ${over}, newer than the export (${p.revision === null ? 'no exported revision' : `exported at ${p.revision}`}), by overwrite`;
          const outcome = repo.upsert(p.type, p.record.id, { ...fields(p.type, p.record), retired: p.retired }, { ...meta, note: note ?? null });
          summary[outcome]++;
          if (over !== undefined) summary.overwritten++;
        }
      });
      return summary;
    },

    /**
     * Turn a shelf sample request into the engine's mixture from current revisions.
     * `candidates` (species ids) come back as engine species at density 0, and
     * their chemicals join the mixture.
     */
    buildMixture(request: ShelfSample, candidateIds: string[] = []) {
      const problems: Problem[] = [];
      const warnings: { code: string; message: string; [k: string]: unknown }[] = [];
      const species: Species[] = [];
      const usedSpecies: { id: string; revision: number; revisionId: number }[] = [];
      const chemKeys = new Set<string>();
      const seen = new Set<string>();
      request.species.forEach((entry, i) => {
        if (seen.has(entry.id)) problems.push({ path: `species[${i}].id`, message: `species "${entry.id}" is listed twice` });
        seen.add(entry.id);
        const rev = repo.get<SpeciesRecord>('species', entry.id);
        if (!rev) {
          problems.push({ path: `species[${i}].id`, message: `no species "${entry.id}" on the shelf` });
          return;
        }
        if (rev.retired) warnings.push({ code: 'retired-species', message: `species "${entry.id}" is retired; its last revision was used.`, species: entry.id });
        try {
          const { id: _id, ...amount } = entry;
          species.push(engineSpecies(rev.record, numberDensity(rev.record, amount)));
        } catch (e) {
          if (e instanceof AmountError) problems.push({ path: `species[${i}].${e.field}`, message: e.reason });
          else throw e;
        }
        usedSpecies.push({ id: rev.id, revision: rev.revision, revisionId: rev.revisionId });
        for (const k of referencedChemicals(rev.record)) chemKeys.add(k);
      });
      const candidates: Species[] = [];
      const usedCandidates: { id: string; revision: number; revisionId: number }[] = [];
      candidateIds.forEach((id, i) => {
        const rev = repo.get<SpeciesRecord>('species', id);
        if (!rev) {
          problems.push({ path: `candidates[${i}]`, message: `no species "${id}" on the shelf` });
          return;
        }
        if (seen.has(id)) {
          problems.push({ path: `candidates[${i}]`, message: `species "${id}" is already in the base` });
          return;
        }
        candidates.push(engineSpecies(rev.record, { value: 0, sd: 0 }));
        usedCandidates.push({ id: rev.id, revision: rev.revision, revisionId: rev.revisionId });
        for (const k of referencedChemicals(rev.record)) chemKeys.add(k);
      });
      // a Map: a chemical called "constructor" or "toString" is an ordinary key, never an inherited property
      const given = new Map(Object.entries(request.chemicals ?? {}));
      for (const k of given.keys()) {
        if (!chemKeys.has(k) && repo.get('chemical', k) === null) problems.push({ path: `chemicals.${k}`, message: `no chemical "${k}" on the shelf` });
        chemKeys.add(k);
      }
      const chemicals: Chemical[] = [];
      const usedChemicals: { id: string; revision: number; revisionId: number }[] = [];
      for (const k of [...chemKeys].sort()) {
        const rev = repo.get<ChemicalRecord>('chemical', k);
        if (!rev) continue; // reported above, or a dangling reference caught at write time
        const c = given.get(k);
        const ch = engineChemical(rev.record, c?.value ?? 0, c?.sd ?? 0);
        // no concentration given: 0 is used and the engine's checks say so (`no-concentration`,
        // engine/checks.ts), in every analysis of this sample, plans and sheets included
        if (c === undefined) ch.concentrationMissing = true;
        chemicals.push(ch);
        usedChemicals.push({ id: rev.id, revision: rev.revision, revisionId: rev.revisionId });
      }
      if (problems.length > 0) throw new InputError(problems);
      const mixture: Mixture = {
        chemicals,
        species,
        chamber: toEngineChamber(request.chamber),
        crowding: request.crowding ?? false,
        conditions: toEngineConditions(request.conditions),
      };
      if (mixture.chamber.walls !== 'unbounded' && mixture.chamber.length === null) {
        throw new InputError([{ path: 'chamber.length', message: `required for ${mixture.chamber.walls} walls (expected length)` }]);
      }
      return { mixture, candidates, revisions: { species: usedSpecies, chemicals: usedChemicals, candidates: usedCandidates }, warnings };
    },
  };
}

export type ShelfService = ReturnType<typeof shelfService>;

/** A sample made of shelf species: amounts, chamber, chemical levels. */
export const shelfSampleSchema = z.strictObject({
  species: z
    .array(amountSchema.extend({ id: keySchema }))
    .min(1, 'a sample needs at least one species')
    .max(LIMITS.species)
    .describe(`shelf species and their amounts (at least 1, at most ${LIMITS.species})`),
  chemicals: idRecord(keySchema, quantity(DIMENSIONS.concentration, 'nonnegative', 'concentration of this chemical in the sample'), LIMITS.chemicals)
    .optional()
    .describe(`chemical levels by shelf id (at most ${LIMITS.chemicals})`),
  chamber: chamberSchema,
  crowding: z.boolean().optional(),
  conditions: conditionsSchema.optional(),
});
export type ShelfSample = z.output<typeof shelfSampleSchema>;
