/**
 * The embedded database: open a SQLite file (or `:memory:`), set the pragmas,
 * and bring the schema up to date with the numbered files in `migrations/`.
 */
import Database from 'better-sqlite3';
import { chmodSync, existsSync, mkdirSync, readdirSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { packagePath } from '../version.js';

export type Db = Database.Database;

/** migrations/ at the package root (found the same way from server/ and dist/server/). */
export const MIGRATIONS_DIR = packagePath('migrations');

/**
 * How long a connection waits for another one's write lock before SQLITE_BUSY (→ HTTP 409 `busy`).
 * Write transactions are short (one revision, one import), so a wait this long is rare.
 */
export const BUSY_TIMEOUT_MS = 5000;

/**
 * Run `fn` as a write transaction that starts with BEGIN IMMEDIATE: the write lock is taken
 * first (waiting up to the busy timeout), so the reads inside see the latest data and the write
 * that follows can never fail with SQLITE_BUSY_SNAPSHOT, as a deferred transaction's read-then-
 * write does at once, without waiting, when another process committed in between (sqlite.org,
 * "Result and Error Codes", SQLITE_BUSY_SNAPSHOT; "BEGIN TRANSACTION", IMMEDIATE). Nested
 * calls become savepoints of the outer transaction (better-sqlite3).
 */
export function writeTransaction<T>(db: Database.Database, fn: () => T): T {
  return db.transaction(fn).immediate();
}

/** The database file was written by a newer brink than this one. */
export class DatabaseTooNewError extends Error {
  override readonly name = 'DatabaseTooNewError';
  constructor(
    readonly databaseVersion: number,
    readonly codeVersion: number,
  ) {
    super(
      `the database is at schema version ${databaseVersion}, newer than this brink understands (${codeVersion}); ` +
        'upgrade brink or point it at another database file (--db PATH).',
    );
  }
}

export interface Migration {
  version: number;
  name: string;
  sql: string;
}

/** The migration files `NNNN_name.sql`, in order. */
export function loadMigrations(dir = MIGRATIONS_DIR): Migration[] {
  const out: Migration[] = [];
  for (const f of readdirSync(dir).sort()) {
    const m = /^(\d{4})_([a-z0-9_]+)\.sql$/.exec(f);
    if (!m) continue;
    out.push({ version: Number(m[1]), name: m[2]!, sql: readFileSync(join(dir, f), 'utf8') });
  }
  out.forEach((m, i) => {
    if (m.version !== i + 1) throw new Error(`migrations must be numbered 0001, 0002, … without gaps; found ${m.version} at position ${i + 1}`);
  });
  return out;
}

/**
 * Apply the pending migrations, each in its own transaction, recording them in
 * `schema_migrations`. Refuses a database newer than the code.
 * @returns the versions applied now
 */
export function migrate(db: Db, migrations: Migration[] = loadMigrations()): number[] {
  db.exec(`CREATE TABLE IF NOT EXISTS schema_migrations (
    version INTEGER PRIMARY KEY, name TEXT NOT NULL, applied_at TEXT NOT NULL)`);
  const current = (db.prepare('SELECT COALESCE(MAX(version), 0) AS v FROM schema_migrations').get() as { v: number }).v;
  const latest = migrations.length === 0 ? 0 : migrations[migrations.length - 1]!.version;
  if (current > latest) throw new DatabaseTooNewError(current, latest);
  const record = db.prepare('INSERT INTO schema_migrations (version, name, applied_at) VALUES (?, ?, ?)');
  const versionNow = db.prepare('SELECT COALESCE(MAX(version), 0) AS v FROM schema_migrations');
  const applied: number[] = [];
  for (const m of migrations) {
    if (m.version <= current) continue;
    // IMMEDIATE, and the version read again inside: two processes opening one new file at once
    // apply each migration once (the second waits for the lock, then finds it done)
    const done = db.transaction(() => {
      if ((versionNow.get() as { v: number }).v >= m.version) return false;
      db.exec(m.sql);
      record.run(m.version, m.name, new Date().toISOString());
      return true;
    }).immediate();
    if (done) applied.push(m.version);
  }
  return applied;
}

/** Current schema version of a database (0 when empty). */
export function schemaVersion(db: Db): number {
  const exists = db.prepare("SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = 'schema_migrations'").get();
  if (!exists) return 0;
  return (db.prepare('SELECT COALESCE(MAX(version), 0) AS v FROM schema_migrations').get() as { v: number }).v;
}

/**
 * Open (creating if needed) a database and migrate it.
 * Pragmas: WAL journal (file databases), foreign keys on, 5 s busy timeout.
 * Every write transaction of brink starts with BEGIN IMMEDIATE (`writeTransaction`).
 */
export function openDatabase(path: string, options: { migrations?: Migration[] } = {}): Db {
  const isNew = path !== ':memory:' && !existsSync(path);
  if (path !== ':memory:') mkdirSync(dirname(path), { recursive: true });
  const db = new Database(path);
  // a new database is its owner's alone (the shelf, plans, token hashes); SQLite gives its -wal and -shm the same mode
  if (isNew) chmodSync(path, 0o600);
  try {
    // the busy timeout first: switching to WAL takes a lock another process may hold for a moment
    db.pragma(`busy_timeout = ${BUSY_TIMEOUT_MS}`);
    if (path !== ':memory:') db.pragma('journal_mode = WAL');
    db.pragma('foreign_keys = ON');
    migrate(db, options.migrations);
  } catch (e) {
    db.close();
    throw e;
  }
  return db;
}
