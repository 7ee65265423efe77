import { LIMITS } from '../schema/limits.js';

/** Input that fails validation: every problem with its field path (→ HTTP 400, CLI exit 2). */
export interface Problem {
  path: string;
  message: string;
}

export class InputError extends Error {
  override readonly name = 'InputError';
  /**
   * @param more problems found but not listed (a reader stops collecting after LIMITS.problems);
   * the message lists at most LIMITS.problems and counts the rest
   */
  constructor(
    readonly problems: Problem[],
    readonly more = 0,
  ) {
    const lines = problems.slice(0, LIMITS.problems).map((p) => (p.path ? `${p.path}: ${p.message}` : p.message));
    const rest = more + Math.max(0, problems.length - LIMITS.problems);
    if (rest > 0) lines.push(`… and ${rest} more problem${rest === 1 ? '' : 's'}`);
    super(lines.join('\n'));
  }
}

/** A well-formed request the domain cannot satisfy (→ HTTP 422). */
export class DomainError extends Error {
  override readonly name = 'DomainError';
  constructor(
    readonly code: string,
    message: string,
  ) {
    super(message);
  }
}

/** One entry of an import that would overwrite a newer edit. */
export interface ImportConflict {
  /** where in the document: `species[3]`, `chemicals[0]` */
  path: string;
  type: 'chemical' | 'species';
  id: string;
  /** the revision the entry was exported at; null for an export made before entries carried it */
  exportedRevision: number | null;
  /** the item's current revision on this shelf */
  currentRevision: number;
}

/** An import refused because entries would overwrite newer edits (→ HTTP 409 `import-conflict`; nothing was written). */
export class ImportConflictError extends Error {
  override readonly name = 'ImportConflictError';
  constructor(readonly conflicts: ImportConflict[]) {
    super(
      `${conflicts.length} ${conflicts.length === 1 ? 'entry' : 'entries'} of the import would overwrite ${conflicts.length === 1 ? 'an edit it does not know' : 'edits they do not know'}, so nothing was imported: ` +
        conflicts
          .map((c) =>
            c.exportedRevision === null
              ? `${c.path} (${c.type} "${c.id}") differs from the shelf's revision ${c.currentRevision} and carries no exported revision to show it is based on it`
              : c.exportedRevision > c.currentRevision
                ? `${c.path} (${c.type} "${c.id}") claims revision ${c.exportedRevision}, which the shelf never had (it is at revision ${c.currentRevision}): an export of another database, or an edited file`
                : `${c.path} (${c.type} "${c.id}") was exported at revision ${c.exportedRevision}, the shelf is at revision ${c.currentRevision}`,
          )
          .join('; ') +
        '. Export again and redo the changes, or import with overwrite=true to replace what the shelf has now (it stays in the history).',
    );
  }
}
