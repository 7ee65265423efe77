/**
 * History cannot be rewritten below the API (migration history_no_overwrite, 0008).
 *
 * Each way around the UPDATE/DELETE triggers is tried with raw SQL, as someone with the sqlite3
 * shell would (foreign keys off, its default): first on a database migrated up to the migration
 * before this one, where it must succeed (so the test shows the hole it closes), then on a fully
 * migrated one, where it must be refused and leave the row as it was. SQLite's REPLACE conflict
 * resolution deletes the clashing row without running delete triggers (sqlite.org, "The ON CONFLICT
 * clause", REPLACE: "delete triggers fire if and only if recursive triggers are enabled").
 */
import { describe, expect, it } from 'vitest';
import { loadMigrations, migrate, openDatabase, type Db } from '../../server/store/db.js';
import { plansRepository } from '../../server/store/plans.js';
import { shelfRepository } from '../../server/store/shelf.js';

const all = loadMigrations();
const mine = all.findIndex((m) => m.name === 'history_no_overwrite');
const before = all.slice(0, mine);

/** A shelf item with two revisions, a plan that used revision 1, a measurement applied as revision 2. */
function fixture(db: Db) {
  const repo = shelfRepository(db);
  repo.create('chemical', 'fuel', { kind: null, name: 'fuel', record: { id: 'fuel', v: 1 } });
  repo.edit('chemical', 'fuel', 1, { kind: null, name: 'fuel', record: { id: 'fuel', v: 2 } });
  const at = '2026-12-01T00:00:00.000Z';
  db.prepare("INSERT INTO plans (id, name, notes, author, created_at, updated_at, request, inputs, result) VALUES (1, 'plan', '', 'a', ?, ?, '{}', '{}', '{\"threshold\":1}')").run(at, at);
  if (db.prepare("SELECT 1 FROM sqlite_master WHERE name = 'plan_text_revisions'").get()) {
    db.prepare("INSERT INTO plan_text_revisions (plan_id, revision, name, notes, author, created_at) VALUES (1, 1, 'plan', '', 'a', ?)").run(at);
  }
  db.prepare("INSERT INTO plan_revisions (plan_id, revision_id, role) VALUES (1, 1, 'chemical')").run();
  db.prepare("INSERT INTO measurements (id, species_key, method, options, data, fit, author, created_at) VALUES (1, 'bead', 'msd', '{}', '[]', '{\"D\":1}', 'a', ?)").run(at);
  db.prepare("INSERT INTO measurement_applications (measurement_id, revision_id, fields, created_at) VALUES (1, 2, '[\"diffusivity\"]', ?)").run(at);
}

/** Everything the history tables hold, to compare before and after an attempt. */
function snapshot(db: Db) {
  const tables = ['shelf_items', 'shelf_revisions', 'plans', 'plan_revisions', 'measurements', 'measurement_applications'];
  if (db.prepare("SELECT 1 FROM sqlite_master WHERE name = 'plan_text_revisions'").get()) tables.push('plan_text_revisions');
  return Object.fromEntries(tables.map((t) => [t, db.prepare(`SELECT rowid AS _rowid, * FROM ${t} ORDER BY rowid`).all()]));
}

function fresh(migrations = all) {
  const db = openDatabase(':memory:', { migrations });
  fixture(db);
  db.pragma('foreign_keys = OFF'); // the sqlite3 shell's default: nothing but the triggers stands in the way
  return db;
}

const bypasses: { what: string; sql: string }[] = [
  { what: 'shelf_revisions: INSERT OR REPLACE over (item, revision)', sql: "INSERT OR REPLACE INTO shelf_revisions (item_id, revision, action, retired, body, author, created_at) VALUES (1, 1, 'edit', 0, '{\"v\":9}', 'x', 'now')" },
  { what: 'shelf_revisions: REPLACE INTO over a row id', sql: "REPLACE INTO shelf_revisions (id, item_id, revision, action, retired, body, author, created_at) VALUES (2, 1, 7, 'edit', 0, '{\"v\":9}', 'x', 'now')" },
  { what: 'shelf_items: INSERT OR REPLACE over (type, key)', sql: "INSERT OR REPLACE INTO shelf_items (type, key, name, current_revision, created_at) VALUES ('chemical', 'fuel', 'fuel', 1, 'now')" },
  { what: 'shelf_items: the current revision moved back (an undo below the API)', sql: "UPDATE shelf_items SET current_revision = 1 WHERE key = 'fuel'" },
  { what: 'shelf_items: the current revision pointed at a revision that does not exist', sql: "UPDATE shelf_items SET current_revision = 5 WHERE key = 'fuel'" },
  { what: 'shelf_items: the key changed', sql: "UPDATE shelf_items SET key = 'other' WHERE key = 'fuel'" },
  { what: 'plans: INSERT OR REPLACE over a plan id (new results)', sql: "INSERT OR REPLACE INTO plans (id, name, notes, author, created_at, updated_at, request, inputs, result) VALUES (1, 'plan', '', 'a', 'now', 'now', '{}', '{}', '{\"threshold\":2}')" },
  { what: 'plans: the author changed', sql: "UPDATE plans SET author = 'someone else' WHERE id = 1" },
  { what: 'plans: the name changed without a revision', sql: "UPDATE plans SET name = 'renamed' WHERE id = 1" },
  { what: 'plan_revisions: UPDATE', sql: 'UPDATE plan_revisions SET revision_id = 2' },
  { what: 'plan_revisions: DELETE', sql: 'DELETE FROM plan_revisions' },
  { what: 'plan_revisions: INSERT OR REPLACE over a row id', sql: "INSERT OR REPLACE INTO plan_revisions (rowid, plan_id, revision_id, role) VALUES (1, 1, 2, 'base')" },
  { what: 'measurements: INSERT OR REPLACE over an id', sql: "INSERT OR REPLACE INTO measurements (id, species_key, method, options, data, fit, author, created_at) VALUES (1, 'bead', 'msd', '{}', '[]', '{\"D\":2}', 'x', 'now')" },
  { what: 'measurement_applications: UPDATE', sql: "UPDATE measurement_applications SET fields = '[]'" },
  { what: 'measurement_applications: DELETE', sql: 'DELETE FROM measurement_applications' },
  { what: 'measurement_applications: REPLACE INTO over (measurement, revision)', sql: "REPLACE INTO measurement_applications (measurement_id, revision_id, fields, created_at) VALUES (1, 2, '[]', 'now')" },
  { what: 'measurement_applications: INSERT OR REPLACE over a row id', sql: "INSERT OR REPLACE INTO measurement_applications (rowid, measurement_id, revision_id, fields, created_at) VALUES (1, 1, 1, '[]', 'now')" },
];

describe('history cannot be rewritten below the API', () => {
  it('the migration is there, after the ones it builds on', () => {
    expect(mine).toBeGreaterThan(0);
  });

  for (const b of bypasses) {
    it(b.what, () => {
      // before the migration: the rewrite goes through (the hole this closes)
      const old = fresh(before);
      const was = snapshot(old);
      old.prepare(b.sql).run();
      expect(snapshot(old)).not.toEqual(was);
      old.close();
      // after: refused, nothing changed
      const db = fresh();
      const kept = snapshot(db);
      expect(() => db.prepare(b.sql).run()).toThrow(/immutable|never|only|exists|current revision/);
      expect(snapshot(db)).toEqual(kept);
      db.close();
    });
  }

  it('plan name and notes revisions: no UPDATE, DELETE or overwrite; an upsert cannot sneak in an UPDATE', () => {
    const db = fresh();
    const kept = snapshot(db);
    for (const sql of [
      "UPDATE plan_text_revisions SET name = 'x'",
      'DELETE FROM plan_text_revisions',
      "INSERT OR REPLACE INTO plan_text_revisions (plan_id, revision, name, notes, author, created_at) VALUES (1, 1, 'x', '', 'x', 'now')",
      "REPLACE INTO plan_text_revisions (id, plan_id, revision, name, notes, author, created_at) VALUES (1, 1, 9, 'x', '', 'x', 'now')",
      "INSERT INTO shelf_revisions (item_id, revision, action, retired, body, author, created_at) VALUES (1, 1, 'edit', 0, '{}', 'x', 'now') ON CONFLICT DO UPDATE SET body = excluded.body",
      "INSERT INTO plan_revisions (plan_id, revision_id, role) VALUES (1, 1, 'chemical') ON CONFLICT DO UPDATE SET revision_id = 2",
    ]) {
      expect(() => db.prepare(sql).run(), sql).toThrow(/immutable/);
    }
    expect(snapshot(db)).toEqual(kept);
  });

  it('the ordinary writes still work: new revisions, a rename as a new text revision', () => {
    const db = openDatabase(':memory:');
    const repo = shelfRepository(db);
    repo.create('chemical', 'fuel', { kind: null, name: 'fuel', record: { id: 'fuel' } });
    expect(repo.edit('chemical', 'fuel', 1, { kind: null, name: 'fuel', record: { id: 'fuel', v: 2 } }).revision).toBe(2);
    expect(repo.setRetired('chemical', 'fuel', true, 2).revision).toBe(3);
    const plans = plansRepository(db);
    const p = plans.create({ name: 'p', notes: '', author: 'a', request: {}, inputs: {}, result: {}, rerunOf: null, revisions: [{ revisionId: 1, role: 'chemical' }, { revisionId: 1, role: 'chemical' }] });
    expect(p.revisions).toEqual([{ revisionId: 1, role: 'chemical' }]);
    expect(plans.rename(p.id, 1, { name: 'q' }, 'b')).toMatchObject({ name: 'q', revision: 2, history: [{ revision: 1, name: 'p' }, { revision: 2, name: 'q', author: 'b' }] });
  });

  it('plans stored before the migration get their name and notes as revision 1', () => {
    const db = openDatabase(':memory:', { migrations: before });
    db.prepare("INSERT INTO plans (name, notes, author, created_at, updated_at, request, inputs, result) VALUES ('old plan', 'its notes', 'a', 'then', 'later', '{}', '{}', '{}')").run();
    migrate(db);
    expect(plansRepository(db).get(1)).toMatchObject({ name: 'old plan', notes: 'its notes', revision: 1, history: [{ revision: 1, name: 'old plan', notes: 'its notes', author: 'a', createdAt: 'later' }] });
    db.close();
  });
});

/**
 * Migration history_rowid_guard (0010): an `UPDATE OF id` trigger does not fire when the statement names
 * the row id (`SET rowid = …`, an alias of the INTEGER PRIMARY KEY), and UPDATE OR REPLACE then deletes the
 * row it collides with without delete triggers (sqlite.org, "CREATE TRIGGER": the UPDATE OF column list;
 * "ROWIDs and the INTEGER PRIMARY KEY"). Also a retirement below the API, without a revision.
 */
describe('no rewrite through the row id, no status change without a revision', () => {
  const guard = all.findIndex((m) => m.name === 'history_rowid_guard');
  const upTo = all.slice(0, guard);
  /** The fixture above, plus a second plan and a second shelf item for the row ids to collide with. */
  function two(migrations = all) {
    const db = openDatabase(':memory:', { migrations });
    fixture(db);
    shelfRepository(db).create('chemical', 'glucose', { kind: null, name: 'glucose', record: { id: 'glucose' } });
    const at = '2026-12-02T00:00:00.000Z';
    db.prepare("INSERT INTO plans (id, name, notes, author, created_at, updated_at, request, inputs, result) VALUES (2, 'second', '', 'b', ?, ?, '{}', '{}', '{}')").run(at, at);
    if (db.prepare("SELECT 1 FROM sqlite_master WHERE name = 'plan_text_revisions'").get())
      db.prepare("INSERT INTO plan_text_revisions (plan_id, revision, name, notes, author, created_at) VALUES (2, 1, 'second', '', 'b', ?)").run(at);
    db.pragma('foreign_keys = OFF');
    return db;
  }
  const cases = [
    { what: 'plans: UPDATE OR REPLACE … SET rowid onto another plan', sql: 'UPDATE OR REPLACE plans SET rowid = 1 WHERE id = 2' },
    { what: 'shelf_items: UPDATE OR REPLACE … SET rowid onto another item', sql: "UPDATE OR REPLACE shelf_items SET rowid = 1 WHERE key = 'glucose'" },
    { what: 'shelf_items: retired without a revision', sql: "UPDATE shelf_items SET retired = 1 WHERE key = 'fuel'" },
  ];
  it('the migration is there, after history_no_overwrite', () => {
    expect(guard).toBeGreaterThan(mine);
  });
  for (const c of cases) {
    it(c.what, () => {
      const old = two(upTo);
      const was = snapshot(old);
      old.prepare(c.sql).run();
      expect(snapshot(old)).not.toEqual(was);
      old.close();
      const db = two();
      const kept = snapshot(db);
      expect(() => db.prepare(c.sql).run()).toThrow(/never change|current revision/);
      expect(snapshot(db)).toEqual(kept);
      db.close();
    });
  }
  it('retiring and restoring through the shelf still work', () => {
    const db = two();
    const repo = shelfRepository(db);
    expect(repo.setRetired('chemical', 'fuel', true, 2, { author: 'a' }).retired).toBe(true);
    expect(repo.setRetired('chemical', 'fuel', false, 3, { author: 'a' }).retired).toBe(false);
    db.close();
  });
});
