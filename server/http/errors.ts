/**
 * The one error handler. Every error leaves as JSON `{ error, message, … }`:
 *
 * | status | when |
 * |---|---|
 * | 400 `invalid-input` | the request does not validate; `problems` lists `{ path, message }` |
 * | 404 `not-found` | unknown id or revision |
 * | 409 `stale-revision` | an edit based on an old revision; `current` is the current one |
 * | 409 `stale-version` | hazard data written on an old version; `current` is the current one |
 * | 409 `duplicate` | create with an id that exists; `existing` is its current revision |
 * | 409 `import-conflict` | an import entry would overwrite a newer edit; `conflicts` lists each, nothing written |
 * | 409 `busy` | another process held the database's write lock past the busy timeout; nothing written, `retryAfter` s |
 * | 422 `domain` | well-formed but outside what brink can answer (`code` says why) |
 * | 400 `bad-request` | not JSON (`code: "invalid-json"`), or another client error of fastify's (`code` is fastify's) |
 * | 413 `too-large` | a body above the service's body limit |
 * | 415 `unsupported-media-type` | a body of a content type brink does not read |
 * | 429 `too-many-requests` | `code: "rate-limited"`: too many compute requests from one client (`retryAfter`, s, and the retry-after header say when to try again); `code: "too-many-jobs"`: every place for a job is taken |
 * | 5xx `internal` | anything else; the text is logged (with the request id), never sent: no stack, no SQL |
 *
 * A 400 `invalid-input` lists at most LIMITS.problems problems; `more` then counts the rest.
 * Every response carries the request id in the `x-request-id` header (app.ts).
 */
import type { FastifyError, FastifyReply, FastifyRequest } from 'fastify';
import { EngineDomainError, EngineInputError } from '../engine/types.js';
import { DomainError, ImportConflictError, InputError, type Problem } from '../shelf/errors.js';
import { StaleVersionError } from '../store/errors.js';
import { DuplicateError, NotFoundError, StaleRevisionError } from '../store/shelf.js';
import { LIMITS } from '../schema/limits.js';

export class RequestValidationError extends Error {
  override readonly name = 'RequestValidationError';
  readonly statusCode = 400;
  constructor(
    readonly part: string,
    readonly problems: Problem[],
  ) {
    super(problems.map((p) => (p.path ? `${p.path}: ${p.message}` : p.message)).join('; '));
  }
}

/** At most LIMITS.problems problems, and how many more there were (a 200,000-entry list of mistakes is not read by anyone). */
export function capProblems(problems: readonly Problem[], cap: number = LIMITS.problems): { shown: Problem[]; more: number } {
  return { shown: problems.slice(0, cap), more: Math.max(0, problems.length - cap) };
}

function invalid(reply: FastifyReply, problems: Problem[], where?: string, uncounted = 0) {
  const capped = capProblems(problems);
  const shown = capped.shown;
  const more = capped.more + uncounted;
  const lines = shown.map((p) => (p.path ? `${p.path}: ${p.message}` : p.message));
  if (more > 0) lines.push(`… and ${more} more problem${more === 1 ? '' : 's'}`);
  return reply.code(400).send({ error: 'invalid-input', message: lines.join('; '), ...(where ? { in: where } : {}), problems: shown, ...(more > 0 ? { more } : {}) });
}

/** The label of a client error of fastify's or of a plugin's, by its status. */
const LABELS: Record<number, string> = { 404: 'not-found', 405: 'method-not-allowed', 406: 'not-acceptable', 413: 'too-large', 414: 'too-large', 415: 'unsupported-media-type', 429: 'too-many-requests', 431: 'too-large' };

/** Errors of the database driver (better-sqlite3's SqliteError, codes SQLITE_…): their text names tables and SQL. */
function isSqlite(err: Error): boolean {
  const code = (err as { code?: unknown }).code;
  return err.name === 'SqliteError' || (typeof code === 'string' && code.startsWith('SQLITE_'));
}

/**
 * SQLite could not get a lock in time: SQLITE_BUSY (and its extended codes, e.g. _SNAPSHOT,
 * _RECOVERY, _TIMEOUT) or SQLITE_LOCKED. better-sqlite3 throws a SqliteError whose `code` is the
 * extended code's name. The transaction was rolled back: the request may simply be sent again.
 */
export function isDatabaseBusy(err: unknown): boolean {
  const code = (err as { code?: unknown } | null)?.code;
  return err instanceof Error && err.name === 'SqliteError' && typeof code === 'string' && /^SQLITE_(BUSY|LOCKED)(_|$)/.test(code);
}

export function errorHandler(this: unknown, err: FastifyError | Error, req: FastifyRequest, reply: FastifyReply) {
  if (err instanceof RequestValidationError) return invalid(reply, err.problems, err.part);
  const v = (err as FastifyError).validation;
  if (Array.isArray(v) && (err as FastifyError).validationContext) {
    const cause = (err as { cause?: unknown }).cause;
    if (cause instanceof RequestValidationError) return invalid(reply, cause.problems, cause.part);
  }
  if (err instanceof InputError) return invalid(reply, err.problems, undefined, err.more);
  if (err instanceof EngineInputError) return invalid(reply, [{ path: err.path, message: err.reason }]);
  if (err instanceof NotFoundError) return reply.code(404).send({ error: 'not-found', message: err.message });
  if (err instanceof StaleRevisionError) return reply.code(409).send({ error: 'stale-revision', message: err.message, current: err.current });
  if (err instanceof StaleVersionError) return reply.code(409).send({ error: 'stale-version', message: err.message, current: err.current });
  if (err instanceof DuplicateError) return reply.code(409).send({ error: 'duplicate', message: err.message, existing: err.existing });
  if (err instanceof ImportConflictError) return reply.code(409).send({ error: 'import-conflict', message: err.message, conflicts: err.conflicts });
  if (isDatabaseBusy(err)) {
    req.log.warn({ code: (err as { code: string }).code }, 'database busy');
    // (a job's error goes through errorBody in routes/jobs.ts, whose stand-in reply has no headers)
    if (typeof reply.header === 'function') reply.header('retry-after', '1');
    return reply.code(409).send({ error: 'busy', message: 'the database is busy with another writer (another brink process on the same file?); nothing was written: send the request again', retryAfter: 1 });
  }
  if (err instanceof DomainError || err instanceof EngineDomainError) {
    return reply.code(422).send({ error: 'domain', code: err.code, message: err.message });
  }
  const status = (err as FastifyError).statusCode;
  if (typeof status === 'number' && status >= 400 && status < 500 && !isSqlite(err)) {
    // fastify's own client errors (malformed JSON, body too large, wrong content type …) and the rate limit's
    if (status === 429) {
      const retryAfter = Number((err as { retryAfter?: unknown }).retryAfter);
      const code = (err as FastifyError).code ?? 'rate-limited';
      return reply.code(429).send({ error: 'too-many-requests', code, message: err.message, ...(Number.isFinite(retryAfter) ? { retryAfter } : {}) });
    }
    return reply.code(status).send({ error: LABELS[status] ?? 'bad-request', code: (err as FastifyError).code, message: err.message });
  }
  req.log.error({ err }, 'internal error');
  return reply.code(typeof status === 'number' && status >= 500 ? status : 500).send({ error: 'internal', message: 'internal error' });
}
