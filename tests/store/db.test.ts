/** The store: migrations, pragmas, immutability, refusal of newer databases, and a restart. */
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { buildApp } from '../../server/http/app.js';
import { ensureDemoShelf } from '../../server/shelf/seed.js';
import { DatabaseTooNewError, loadMigrations, migrate, openDatabase, schemaVersion } from '../../server/store/db.js';
import { shelfRepository } from '../../server/store/shelf.js';
import { chemicalRecord } from '../helpers/app.js';

const tmp = () => join(mkdtempSync(join(tmpdir(), 'brink-db-')), 'shelf.sqlite');

describe('migrations', () => {
  it('bring an empty database to the latest version, once', () => {
    const db = openDatabase(':memory:');
    const all = loadMigrations();
    expect(all.length).toBeGreaterThan(0);
    expect(schemaVersion(db)).toBe(all[all.length - 1]!.version);
    expect(migrate(db)).toEqual([]);
    const tables = db.prepare("SELECT name FROM sqlite_master WHERE type = 'table' ORDER BY name").all().map((r) => (r as { name: string }).name);
    expect(tables).toEqual(expect.arrayContaining(['shelf_items', 'shelf_revisions', 'schema_migrations', 'app_meta']));
    db.close();
  });

  it('apply only the pending ones, each recorded', () => {
    const db = openDatabase(':memory:', { migrations: [] });
    expect(schemaVersion(db)).toBe(0);
    expect(migrate(db)).toEqual(loadMigrations().map((m) => m.version));
    db.close();
  });

  it('roll back a failing migration as a whole', () => {
    const db = openDatabase(':memory:', { migrations: [] });
    const bad = [...loadMigrations(), { version: loadMigrations().length + 1, name: 'broken', sql: 'CREATE TABLE t (x); INSERT INTO nowhere VALUES (1);' }];
    expect(() => migrate(db, bad)).toThrow();
    expect(db.prepare("SELECT name FROM sqlite_master WHERE name = 't'").get()).toBeUndefined();
    expect(schemaVersion(db)).toBe(loadMigrations().length);
    db.close();
  });

  it('refuse a database newer than the code, with a clear message', () => {
    const path = tmp();
    const db = openDatabase(path);
    db.prepare('INSERT INTO schema_migrations (version, name, applied_at) VALUES (?, ?, ?)').run(999, 'future', new Date().toISOString());
    db.close();
    expect(() => openDatabase(path)).toThrow(DatabaseTooNewError);
    expect(() => openDatabase(path)).toThrow(/schema version 999, newer than this brink understands/);
  });

  it('set WAL, foreign keys and a busy timeout', () => {
    const db = openDatabase(tmp());
    expect(db.pragma('journal_mode', { simple: true })).toBe('wal');
    expect(db.pragma('foreign_keys', { simple: true })).toBe(1);
    expect(db.pragma('busy_timeout', { simple: true })).toBe(5000);
    db.close();
  });
});

describe('immutability', () => {
  it('revisions cannot be updated or deleted, items cannot be deleted', () => {
    const db = openDatabase(':memory:');
    const repo = shelfRepository(db);
    repo.create('chemical', 'x', { kind: null, name: 'x', record: { id: 'x' } });
    expect(() => db.prepare('UPDATE shelf_revisions SET body = ?').run('{}')).toThrow(/immutable/);
    expect(() => db.prepare('DELETE FROM shelf_revisions').run()).toThrow(/immutable/);
    expect(() => db.prepare('DELETE FROM shelf_items').run()).toThrow(/never deleted/);
    db.close();
  });
});

describe('restart', () => {
  it('what was written survives closing and reopening the same file', async () => {
    const path = tmp();
    const db1 = openDatabase(path);
    expect(ensureDemoShelf(db1)).toBe(true);
    const app1 = await buildApp({ config: { closeDatabase: true }, db: db1 });
    const created = await app1.inject({ method: 'POST', url: '/api/chemicals', payload: { record: chemicalRecord('restart-check') } });
    expect(created.statusCode).toBe(201);
    await app1.inject({ method: 'PUT', url: '/api/chemicals/restart-check', payload: { baseRevision: 1, record: chemicalRecord('restart-check', '1.5e-9 m^2/s') } });
    await app1.close();

    const db2 = openDatabase(path);
    expect(ensureDemoShelf(db2)).toBe(false); // seeded on the first run only
    const app2 = await buildApp({ config: { closeDatabase: true }, db: db2 });
    const read = (await app2.inject({ method: 'GET', url: '/api/chemicals/restart-check' })).json();
    expect(read).toMatchObject({ revision: 2 });
    expect(read.record.diffusivity.input).toBe('1.5e-9 m^2/s');
    const h = (await app2.inject({ method: 'GET', url: '/api/chemicals/restart-check/revisions' })).json();
    expect(h.revisions.map((r: { record: { diffusivity: { input: string } } }) => r.record.diffusivity.input)).toEqual(['1.4e-9 m^2/s', '1.5e-9 m^2/s']);
    expect((await app2.inject({ method: 'GET', url: '/api/species' })).json().total).toBe(8);
    await app2.close();
  });
});
