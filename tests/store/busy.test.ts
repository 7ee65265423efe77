/**
 * Two connections on one file (as two processes would be): why write transactions start with
 * BEGIN IMMEDIATE, and that a write lock held too long is a 409 `busy`, never a 500.
 *
 * In WAL mode a deferred transaction that reads and then writes cannot upgrade its snapshot when
 * another connection committed in between: SQLITE_BUSY_SNAPSHOT at once, without the busy handler
 * (sqlite.org, "Result and Error Codes", SQLITE_BUSY_SNAPSHOT).
 */
import Database from 'better-sqlite3';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { buildApp } from '../../server/http/app.js';
import { isDatabaseBusy } from '../../server/http/errors.js';
import { openDatabase, writeTransaction } from '../../server/store/db.js';
import { shelfRepository } from '../../server/store/shelf.js';
import { chemicalRecord } from '../helpers/app.js';

const tmp = () => join(mkdtempSync(join(tmpdir(), 'brink-busy-')), 'shelf.sqlite');

function twoConnections() {
  const path = tmp();
  const a = openDatabase(path);
  const b = new Database(path);
  b.pragma('busy_timeout = 0');
  a.exec('CREATE TABLE counter (n INTEGER)');
  a.exec('INSERT INTO counter VALUES (0)');
  return { a, b };
}

describe('write transactions and a second connection', () => {
  it('a deferred read-then-write fails with SQLITE_BUSY_SNAPSHOT when another connection wrote in between (the hazard)', () => {
    const { a, b } = twoConnections();
    let err: unknown;
    try {
      a.transaction(() => {
        const n = (a.prepare('SELECT n FROM counter').get() as { n: number }).n;
        b.exec('UPDATE counter SET n = n + 10'); // the other process commits
        a.prepare('UPDATE counter SET n = ?').run(n + 1);
      }).deferred();
    } catch (e) {
      err = e;
    }
    expect((err as { code: string }).code).toBe('SQLITE_BUSY_SNAPSHOT');
    expect(isDatabaseBusy(err)).toBe(true);
  });

  it('BEGIN IMMEDIATE takes the write lock first: the other connection waits (here: is told busy), no update is lost', () => {
    const { a, b } = twoConnections();
    let other: unknown;
    writeTransaction(a, () => {
      const n = (a.prepare('SELECT n FROM counter').get() as { n: number }).n;
      try {
        b.exec('UPDATE counter SET n = n + 10');
      } catch (e) {
        other = e;
      }
      a.prepare('UPDATE counter SET n = ?').run(n + 1);
    });
    expect((other as { code: string }).code).toBe('SQLITE_BUSY');
    b.exec('UPDATE counter SET n = n + 10'); // once the lock is free, it goes through
    expect((a.prepare('SELECT n FROM counter').get() as { n: number }).n).toBe(11);
  });

  it('a write lock held past the busy timeout is a 409 busy with a retry hint, and nothing is written', async () => {
    const path = tmp();
    const db = openDatabase(path);
    shelfRepository(db).create('chemical', 'fuel', { kind: null, name: 'chemical fuel', record: chemicalRecord('fuel') });
    db.pragma('busy_timeout = 50');
    const app = await buildApp({ db, config: { closeDatabase: true } });
    const other = new Database(path);
    other.exec('BEGIN IMMEDIATE');
    const r = await app.inject({ method: 'POST', url: '/api/chemicals', payload: { record: chemicalRecord('fuel-2') } });
    expect(r.statusCode).toBe(409);
    expect(r.json()).toMatchObject({ error: 'busy', retryAfter: 1 });
    expect(r.headers['retry-after']).toBe('1');
    expect(r.json().message).not.toMatch(/SQLITE|database is locked/);
    other.exec('COMMIT');
    expect((await app.inject({ method: 'GET', url: '/api/chemicals/fuel-2' })).statusCode).toBe(404);
    expect((await app.inject({ method: 'POST', url: '/api/chemicals', payload: { record: chemicalRecord('fuel-2') } })).statusCode).toBe(201);
    other.close();
    await app.close();
  });
});
