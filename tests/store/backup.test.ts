/** What `brink restore` checks before it replaces anything, and what it does with an older backup. */
import Database from 'better-sqlite3';
import { existsSync, mkdtempSync, openSync, readdirSync, writeSync, closeSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { backupDatabase, BackupError, restoreDatabase } from '../../server/store/backup.js';
import { loadMigrations, openDatabase, schemaVersion } from '../../server/store/db.js';
import { plansRepository } from '../../server/store/plans.js';
import { shelfRepository } from '../../server/store/shelf.js';
import { tokensRepository } from '../../server/store/tokens.js';

const dir = () => mkdtempSync(join(tmpdir(), 'brink-restore-'));

/** A database at `path` with one chemical `key` (migrated with `migrations`). */
function make(path: string, key: string, migrations = loadMigrations()) {
  const db = openDatabase(path, { migrations });
  shelfRepository(db).create('chemical', key, { kind: null, name: key, record: { id: key } });
  db.close();
}
const keys = (path: string) => {
  const db = new Database(path, { fileMustExist: true }); // read-write: its close removes the -wal and -shm a read opens

  try {
    return (db.prepare('SELECT key FROM shelf_items ORDER BY key').all() as { key: string }[]).map((r) => r.key);
  } finally {
    db.close();
  }
};

async function refused(backup: string, target: string, message: RegExp) {
  const before = readdirSync(target.replace(/\/[^/]+$/, '')).sort();
  await expect(restoreDatabase(backup, target)).rejects.toThrow(message);
  await expect(restoreDatabase(backup, target)).rejects.toBeInstanceOf(BackupError);
  // nothing replaced, nothing left behind
  expect(keys(target)).toEqual(['current']);
  expect(readdirSync(target.replace(/\/[^/]+$/, '')).sort()).toEqual(before);
}

describe('restore checks the backup first', () => {
  it('restores a good backup and keeps the old file', async () => {
    const d = dir();
    make(join(d, 'brink.sqlite'), 'current');
    make(join(d, 'old.sqlite'), 'from-backup');
    const r = await restoreDatabase(join(d, 'old.sqlite'), join(d, 'brink.sqlite'), new Date('2026-12-05T01:02:03.456Z'));
    expect(r).toMatchObject({ integrity: 'ok', schemaVersion: loadMigrations().length, migrated: [], keptAs: join(d, 'brink.sqlite.before-restore-2026-12-05T01-02-03Z') });
    expect(keys(join(d, 'brink.sqlite'))).toEqual(['from-backup']);
    expect(keys(r.keptAs!)).toEqual(['current']);
  });

  it('a token revoked since the backup stays revoked; tokens made since are reported gone (found in review)', async () => {
    const d = dir();
    const live = join(d, 'brink.sqlite');
    make(live, 'current');
    let db = openDatabase(live);
    const tokens = tokensRepository(db);
    const leaked = tokens.create('Cy (invented)');
    const kept = tokens.create('Di (invented)');
    db.close();
    await backupDatabase(live, join(d, 'bk.sqlite'));
    db = openDatabase(live);
    tokensRepository(db).revoke(leaked.token.prefix);
    const later = tokensRepository(db).create('Ed (invented)');
    db.close();
    const r = await restoreDatabase(join(d, 'bk.sqlite'), live);
    expect(r.revocationsKept).toEqual([{ holder: 'Cy (invented)', prefix: leaked.token.prefix }]);
    expect(r.tokensNotInBackup).toEqual([{ holder: 'Ed (invented)', prefix: later.token.prefix }]);
    db = openDatabase(live);
    const after = tokensRepository(db);
    expect(after.check(leaked.secret).status).toBe('revoked');
    expect(after.check(kept.secret).status).toBe('valid');
    expect(after.check(later.secret).status).toBe('unknown');
    db.close();
  });

  it('a backup into a folder that does not exist yet makes it; the database and the backup are the owner\'s alone (found in a walk-through)', async () => {
    const d = dir();
    make(join(d, 'brink.sqlite'), 'current');
    expect(statSync(join(d, 'brink.sqlite')).mode & 0o777).toBe(0o600);
    const dest = join(d, 'backups', 'nightly', 'b1.sqlite');
    await backupDatabase(join(d, 'brink.sqlite'), dest);
    expect(keys(dest)).toEqual(['current']);
    expect(statSync(dest).mode & 0o777).toBe(0o600);
    expect(statSync(join(d, 'backups')).mode & 0o777).toBe(0o700);
  });

  it('refuses a backup newer than this brink', async () => {
    const d = dir();
    make(join(d, 'brink.sqlite'), 'current');
    make(join(d, 'new.sqlite'), 'x');
    const db = new Database(join(d, 'new.sqlite'));
    db.prepare('INSERT INTO schema_migrations (version, name, applied_at) VALUES (?, ?, ?)').run(loadMigrations().length + 1, 'future', 'then');
    db.close();
    await refused(join(d, 'new.sqlite'), join(d, 'brink.sqlite'), /newer than this brink understands/);
  });

  it('migrates an older backup after putting it in place (in the staged copy, before anything is replaced)', async () => {
    const d = dir();
    make(join(d, 'brink.sqlite'), 'current');
    const older = loadMigrations().slice(0, 5);
    make(join(d, 'old.sqlite'), 'older');
    const o = openDatabase(join(d, 'older.sqlite'), { migrations: older });
    shelfRepository(o).create('chemical', 'older', { kind: null, name: 'older', record: { id: 'older' } });
    o.prepare("INSERT INTO plans (name, notes, author, created_at, updated_at, request, inputs, result) VALUES ('p', 'n', 'a', 't', 't', '{}', '{}', '{}')").run();
    o.close();
    const r = await restoreDatabase(join(d, 'older.sqlite'), join(d, 'brink.sqlite'));
    expect(r.schemaVersion).toBe(5);
    expect(r.migrated).toEqual(loadMigrations().slice(5).map((m) => m.version));
    const db = openDatabase(join(d, 'brink.sqlite'));
    expect(schemaVersion(db)).toBe(loadMigrations().length);
    expect(plansRepository(db).get(1)).toMatchObject({ name: 'p', revision: 1 });
    db.close();
    // the backup file itself is left as it was
    const b = new Database(join(d, 'older.sqlite'), { readonly: true });
    expect(schemaVersion(b)).toBe(5);
    b.close();
  });

  it('refuses a file that is not a database, a SQLite file that is not brink’s, and a damaged one', async () => {
    const d = dir();
    make(join(d, 'brink.sqlite'), 'current');
    const junk = join(d, 'junk.sqlite');
    closeSync(openSync(junk, 'w'));
    writeSync(openSync(junk, 'w'), 'this is not a database, just text '.repeat(200));
    await refused(junk, join(d, 'brink.sqlite'), /not a readable SQLite database/);

    const other = new Database(join(d, 'other.sqlite'));
    other.exec('CREATE TABLE notes (x)');
    other.close();
    await refused(join(d, 'other.sqlite'), join(d, 'brink.sqlite'), /not a brink database/);

    const foreign = join(d, 'foreign.sqlite');
    make(foreign, 'f');
    const f = new Database(foreign);
    f.exec("UPDATE schema_migrations SET name = 'something_else' WHERE version = 2");
    f.close();
    await refused(foreign, join(d, 'brink.sqlite'), /has migration 2 "something_else"/);

    // damage: overwrite the middle of the file (pages of tables and indexes)
    const damaged = join(d, 'damaged.sqlite');
    make(damaged, 'd');
    const size = statSync(damaged).size;
    const fd = openSync(damaged, 'r+');
    writeSync(fd, Buffer.alloc(4096 * 3, 0x5a), 0, 4096 * 3, Math.floor(size / 2 / 4096) * 4096);
    closeSync(fd);
    await refused(damaged, join(d, 'brink.sqlite'), /integrity_check|not a readable SQLite database|malformed/);
  });

  it('refuses while another connection has the database open', async () => {
    const d = dir();
    make(join(d, 'brink.sqlite'), 'current');
    make(join(d, 'b.sqlite'), 'b');
    const held = openDatabase(join(d, 'brink.sqlite'));
    await expect(restoreDatabase(join(d, 'b.sqlite'), join(d, 'brink.sqlite'))).rejects.toThrow(/in use by another process/);
    held.close();
    expect(keys(join(d, 'brink.sqlite'))).toEqual(['current']);
  });

  it('restores over a file that is no database any more (what a restore is for), keeping it aside', async () => {
    const d = dir();
    writeSync(openSync(join(d, 'brink.sqlite'), 'w'), 'overwritten by mistake '.repeat(300));
    make(join(d, 'b.sqlite'), 'b');
    const r = await restoreDatabase(join(d, 'b.sqlite'), join(d, 'brink.sqlite'));
    expect(keys(join(d, 'brink.sqlite'))).toEqual(['b']);
    expect(existsSync(r.keptAs!)).toBe(true);
  });

  it('restores into a path where there was no database (nothing to keep)', async () => {
    const d = dir();
    make(join(d, 'b.sqlite'), 'b');
    const r = await restoreDatabase(join(d, 'b.sqlite'), join(d, 'new.sqlite'));
    expect(r.keptAs).toBeNull();
    expect(keys(join(d, 'new.sqlite'))).toEqual(['b']);
  });
});

describe('backup', () => {
  it('never overwrites, and writes a whole single file', async () => {
    const d = dir();
    make(join(d, 'brink.sqlite'), 'current');
    const r = await backupDatabase(join(d, 'brink.sqlite'), join(d, 'copy.sqlite'));
    expect(r).toMatchObject({ integrity: 'ok', chemicals: 1, species: 0 });
    expect(existsSync(join(d, 'copy.sqlite-wal'))).toBe(false);
    await expect(backupDatabase(join(d, 'brink.sqlite'), join(d, 'copy.sqlite'))).rejects.toThrow(/exists: choose a new file name/);
    await expect(backupDatabase(join(d, 'none.sqlite'), join(d, 'x.sqlite'))).rejects.toThrow(/no database at/);
    const c = new Database(join(d, 'copy.sqlite'), { readonly: true });
    expect(c.pragma('journal_mode', { simple: true })).toBe('delete');
    c.close();
  });

  it('copies a database of a newer brink too (a copy checks integrity only; restoring it is what is refused)', async () => {
    const d = dir();
    make(join(d, 'new.sqlite'), 'x');
    const db = new Database(join(d, 'new.sqlite'));
    db.prepare('INSERT INTO schema_migrations (version, name, applied_at) VALUES (?, ?, ?)').run(loadMigrations().length + 1, 'future', 'then');
    db.close();
    expect((await backupDatabase(join(d, 'new.sqlite'), join(d, 'copy.sqlite'))).schemaVersion).toBe(loadMigrations().length + 1);
    await expect(restoreDatabase(join(d, 'copy.sqlite'), join(d, 'other.sqlite'))).rejects.toThrow(/newer than this brink/);
  });
});
