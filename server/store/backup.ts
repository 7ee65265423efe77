/**
 * Backups of the database file and restoring one (`brink backup`, `brink restore`).
 *
 * A backup uses SQLite's online backup (better-sqlite3 `db.backup`), which reads a consistent
 * snapshot while the service keeps reading and writing: all pages are copied in one step, so a
 * write by another process cannot make it start over. The copy is written next to the target as
 * `<file>.partial-<pid>`, checked (`PRAGMA integrity_check`), switched to a single-file journal and
 * only then renamed to `<file>`: a backup file is whole or absent.
 *
 * A restore checks the backup before anything is replaced: that it is a SQLite database, that
 * `PRAGMA integrity_check` says ok, that it is a brink database (schema_migrations) whose schema
 * is not newer than this brink and whose migrations are this brink's. It refuses while any other
 * process has the target open (a connection in exclusive locking mode cannot begin an exclusive
 * transaction while another connection holds the database: SQLITE_BUSY; this sees `brink serve`,
 * another command, or a sqlite3 shell on the same machine). The backup is copied to
 * `<db>.restoring`, migrated there to this brink's schema when older, and renamed into place; the
 * old database is kept as `<db>.before-restore-<time>` (checkpointed first, so its -wal and -shm
 * are folded in and gone; any left are renamed with it).
 */
import Database from 'better-sqlite3';
import { chmodSync, existsSync, mkdirSync, renameSync, rmSync, statSync } from 'node:fs';
import { basename, dirname, join } from 'node:path';
import { BUSY_TIMEOUT_MS, loadMigrations, openDatabase, schemaVersion, writeTransaction, type Migration } from './db.js';

/** A backup or restore that cannot go ahead; the message says why and what to do (CLI exit 2). */
export class BackupError extends Error {
  override readonly name = 'BackupError';
}

export interface BackupCheck {
  integrity: 'ok';
  schemaVersion: number;
  species: number;
  chemicals: number;
  plans: number;
}

/** Rows of a table (0 when the table is not there), optionally only those matching a fixed condition. */
const count = (db: Database.Database, table: string, where = '1') =>
  db.prepare("SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = ?").get(table) ? (db.prepare(`SELECT COUNT(*) AS n FROM ${table} WHERE ${where}`).get() as { n: number }).n : 0;

/**
 * Check an open database as a brink backup: integrity, schema version not newer than the code,
 * migrations the same as the code's. Throws BackupError otherwise.
 */
export function checkBrinkDatabase(db: Database.Database, label: string, migrations: Migration[] = loadMigrations(), o: { schema?: boolean } = {}): BackupCheck {
  let problems: string[];
  try {
    problems = (db.pragma('integrity_check') as { integrity_check: string }[]).map((r) => r.integrity_check);
  } catch (e) {
    throw new BackupError(`${label} is not a readable SQLite database (${(e as { code?: string }).code ?? (e as Error).message})`);
  }
  if (problems.length !== 1 || problems[0] !== 'ok') {
    throw new BackupError(`${label} fails PRAGMA integrity_check: ${problems.slice(0, 5).join('; ')}${problems.length > 5 ? ` … (${problems.length} problems)` : ''}`);
  }
  const version = schemaVersion(db);
  if (version === 0) throw new BackupError(`${label} is not a brink database (no schema_migrations table)`);
  const latest = migrations.length;
  if (o.schema === false) return counts(db, version); // a copy of any brink database may be taken
  if (version > latest) throw new BackupError(`${label} is at schema version ${version}, newer than this brink understands (${latest}): restore it with a newer brink`);
  const names = db.prepare('SELECT version, name FROM schema_migrations ORDER BY version').all() as { version: number; name: string }[];
  for (const { version: v, name } of names) {
    const ours = migrations[v - 1];
    if (!ours || ours.name !== name) throw new BackupError(`${label} has migration ${v} "${name}", this brink's is "${ours?.name ?? 'none'}": it is not a database of this brink`);
  }
  return counts(db, version);
}

function counts(db: Database.Database, version: number): BackupCheck {
  return { integrity: 'ok', schemaVersion: version, species: count(db, 'shelf_items', "type = 'species'"), chemicals: count(db, 'shelf_items', "type = 'chemical'"), plans: count(db, 'plans') };
}

/** Copy every page of `src` to `dest` in one step (one consistent snapshot; no restart when another process writes). */
async function copyAll(src: Database.Database, dest: string) {
  return src.backup(dest, { progress: () => 0x7fffffff });
}

/**
 * Back up the database at `dbPath` to `dest` while it may be in use.
 * @returns what the backup holds
 */
export async function backupDatabase(dbPath: string, dest: string): Promise<BackupCheck & { pages: number; bytes: number }> {
  if (!existsSync(dbPath)) throw new BackupError(`no database at ${dbPath} (use --db PATH or BRINK_DB)`);
  if (existsSync(dest)) throw new BackupError(`${dest} exists: choose a new file name (a backup never overwrites)`);
  // the folder of backups is made if need be (owner only: a backup holds the whole shelf and the token hashes)
  mkdirSync(dirname(dest) || '.', { recursive: true, mode: 0o700 });
  const partial = join(dirname(dest), `${basename(dest)}.partial-${process.pid}`);
  const src = new Database(dbPath, { fileMustExist: true });
  let pages = 0;
  try {
    src.pragma(`busy_timeout = ${BUSY_TIMEOUT_MS}`);
    const r = await copyAll(src, partial);
    pages = r.totalPages;
  } catch (e) {
    for (const f of [partial, `${partial}-wal`, `${partial}-shm`, `${partial}-journal`]) rmSync(f, { force: true });
    throw e;
  } finally {
    src.close();
  }
  let check: BackupCheck;
  const copy = new Database(partial);
  try {
    check = checkBrinkDatabase(copy, `the backup of ${dbPath}`, undefined, { schema: false });
    copy.pragma('journal_mode = DELETE'); // one self-contained file
  } catch (e) {
    copy.close();
    rmSync(partial, { force: true });
    throw e;
  }
  copy.close();
  chmodSync(partial, 0o600);
  renameSync(partial, dest);
  return { ...check, pages, bytes: statSync(dest).size };
}

/**
 * Open a backup read-only for `fn`. Reading a file in WAL mode makes SQLite create an empty -wal
 * and a -shm beside it, which a read-only connection cannot remove: those made here are removed.
 */
function readBackup<T>(file: string, fn: (db: Database.Database) => T | Promise<T>): Promise<T> {
  const had = ['-wal', '-shm'].filter((x) => existsSync(file + x));
  let db: Database.Database;
  try {
    db = new Database(file, { readonly: true, fileMustExist: true });
  } catch (e) {
    throw new BackupError(`cannot open ${file}: ${(e as Error).message}`);
  }
  const tidy = () => {
    db.close();
    if (had.length === 0 && existsSync(`${file}-wal`) && statSync(`${file}-wal`).size === 0) for (const x of ['-wal', '-shm']) rmSync(file + x, { force: true });
  };
  return Promise.resolve()
    .then(() => fn(db))
    .finally(tidy);
}

/** Inspect a backup file without changing it. */
export async function inspectBackup(file: string): Promise<BackupCheck> {
  if (!existsSync(file)) throw new BackupError(`no backup at ${file}`);
  return readBackup(file, (db) => checkBrinkDatabase(db, file));
}

/**
 * Refuse when another process has the database open; otherwise checkpoint it (its WAL folded into
 * the file, -wal and -shm removed on close). A connection in exclusive locking mode needs the only
 * lock on the file to begin an exclusive transaction; with a busy timeout of 0 it is told
 * SQLITE_BUSY at once when another connection (the service's) holds one.
 */
export function assertNotInUse(dbPath: string): void {
  if (!existsSync(dbPath)) return;
  const db = new Database(dbPath, { fileMustExist: true });
  try {
    db.pragma('busy_timeout = 0');
    db.pragma('locking_mode = EXCLUSIVE');
    try {
      db.exec('BEGIN EXCLUSIVE');
      db.exec('COMMIT');
    } catch (e) {
      const code = (e as { code?: string }).code ?? '';
      if (/^SQLITE_(BUSY|LOCKED)/.test(code)) {
        throw new BackupError(`${dbPath} is in use by another process (is brink serve running on it?): stop it, then restore`);
      }
      // a file too damaged to be read cannot be served either: it is kept aside like any other
      if (/^SQLITE_(NOTADB|CORRUPT)/.test(code)) return;
      throw new BackupError(`cannot lock ${dbPath}: ${(e as Error).message}`);
    }
  } finally {
    db.close();
  }
}

const stamp = (d: Date) => d.toISOString().replace(/\.\d+Z$/, 'Z').replace(/:/g, '-');

export interface RestoreResult extends BackupCheck {
  /** where the database that was there is kept, or null when there was none */
  keptAs: string | null;
  /** migrations applied to the restored copy (an older backup), in order */
  migrated: number[];
  /** access tokens revoked in the replaced database that the backup still had active: revoked in the restored one too */
  revocationsKept: { holder: string; prefix: string }[];
  /** active tokens of the replaced database that the backup does not have (created after it): gone, make them again */
  tokensNotInBackup: { holder: string; prefix: string }[];
}

interface TokenRow {
  holder: string;
  prefix: string;
  hash: string;
  revoked_at: string | null;
}

/** The access tokens of a database file (none when it predates them or cannot be read). */
function tokensOf(path: string): TokenRow[] {
  if (!existsSync(path)) return [];
  try {
    const db = new Database(path, { readonly: true, fileMustExist: true });
    try {
      const has = db.prepare("SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = 'access_tokens'").get();
      return has ? (db.prepare('SELECT holder, prefix, hash, revoked_at FROM access_tokens').all() as TokenRow[]) : [];
    } finally {
      db.close();
    }
  } catch {
    return [];
  }
}

/**
 * A revocation is never undone by a restore: a token revoked since the backup (it leaked, its holder left)
 * is revoked in the restored copy too, at the time it was revoked. Tokens made since the backup are
 * reported, not copied (the backup is what is restored).
 */
function keepRevocations(staged: Database.Database, current: TokenRow[]) {
  const backupTokens = staged.prepare('SELECT holder, prefix, hash, revoked_at FROM access_tokens').all() as TokenRow[];
  const inBackup = new Map(backupTokens.map((t) => [t.hash, t]));
  const revoke = staged.prepare('UPDATE access_tokens SET revoked_at = ? WHERE hash = ? AND revoked_at IS NULL');
  const revocationsKept: RestoreResult['revocationsKept'] = [];
  const tokensNotInBackup: RestoreResult['tokensNotInBackup'] = [];
  writeTransaction(staged, () => {
    for (const t of current) {
      const b = inBackup.get(t.hash);
      if (!b) {
        if (t.revoked_at === null) tokensNotInBackup.push({ holder: t.holder, prefix: t.prefix });
      } else if (t.revoked_at !== null && b.revoked_at === null) {
        revoke.run(t.revoked_at, t.hash);
        revocationsKept.push({ holder: t.holder, prefix: t.prefix });
      }
    }
  });
  return { revocationsKept, tokensNotInBackup };
}

/**
 * Replace the database at `dbPath` by the backup `file`, after checking the backup and that no
 * other process has the database open. Nothing is replaced when a check fails.
 */
export async function restoreDatabase(file: string, dbPath: string, now = new Date()): Promise<RestoreResult> {
  const check = await inspectBackup(file);
  assertNotInUse(dbPath);
  const staging = `${dbPath}.restoring`;
  for (const f of [staging, `${staging}-wal`, `${staging}-shm`]) rmSync(f, { force: true });
  await readBackup(file, (src) => copyAll(src, staging));
  let migrated: number[] = [];
  let tokens: Pick<RestoreResult, 'revocationsKept' | 'tokensNotInBackup'> = { revocationsKept: [], tokensNotInBackup: [] };
  try {
    // open migrates (an older backup is brought to this brink's schema) in the staged copy, before anything is replaced
    const before = check.schemaVersion;
    const db = openDatabase(staging);
    const after = schemaVersion(db);
    migrated = loadMigrations()
      .map((m) => m.version)
      .filter((v) => v > before && v <= after);
    tokens = keepRevocations(db, tokensOf(dbPath));
    db.close(); // last connection: checkpointed, -wal and -shm removed
  } catch (e) {
    for (const f of [staging, `${staging}-wal`, `${staging}-shm`]) rmSync(f, { force: true });
    throw e;
  }
  let keptAs: string | null = null;
  if (existsSync(dbPath)) {
    keptAs = `${dbPath}.before-restore-${stamp(now)}`;
    renameSync(dbPath, keptAs);
    for (const suffix of ['-wal', '-shm']) if (existsSync(dbPath + suffix)) renameSync(dbPath + suffix, keptAs + suffix);
  }
  renameSync(staging, dbPath);
  return { ...check, keptAs, migrated, ...tokens };
}
