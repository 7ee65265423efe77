/** Hazard sets in the store (migrations 0004 and 0005): versions, stale writes, immutability, chemicals and species apart. */
import { describe, expect, it } from 'vitest';
import { openDatabase } from '../../server/store/db.js';
import { StaleVersionError } from '../../server/store/errors.js';
import { hazardsRepository } from '../../server/store/hazards.js';

const body = (note: string) => ({ source: 'test data', forms: ['powder'], bands: [], storage: note });

describe('species hazard sets (0005)', () => {
  it('migration 0005 creates the table', () => {
    const db = openDatabase(':memory:');
    const names = (db.prepare("SELECT name FROM sqlite_master WHERE type IN ('table', 'trigger')").all() as { name: string }[]).map((r) => r.name);
    expect(names).toEqual(expect.arrayContaining(['species_hazard_sets', 'species_hazard_sets_immutable_update', 'species_hazard_sets_immutable_delete']));
    expect((db.prepare('SELECT MAX(version) AS v FROM schema_migrations').get() as { v: number }).v).toBeGreaterThanOrEqual(5);
  });
  it('versions count up from 1; a write on a stale base is refused with the current version', () => {
    const repo = hazardsRepository(openDatabase(':memory:'));
    expect(repo.species.current('enz')).toBeNull();
    const v1 = repo.species.write('enz', 0, body('a'), { author: 'officer (invented)' });
    expect(v1).toMatchObject({ id: 'enz', species: 'enz', kind: 'species', version: 1, author: 'officer (invented)', body: body('a') });
    expect(repo.species.write('enz', 1, body('b')).version).toBe(2);
    let err: unknown;
    try {
      repo.species.write('enz', 1, body('c'));
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(StaleVersionError);
    expect((err as StaleVersionError).message).toMatch(/species "enz" are at version 2, not 1/);
    expect(((err as StaleVersionError).current as { version: number }).version).toBe(2);
    expect(repo.species.history('enz').map((h) => h.version)).toEqual([1, 2]);
    expect(repo.species.current('enz')!.body).toEqual(body('b'));
  });
  it('rows are immutable: UPDATE and DELETE abort', () => {
    const db = openDatabase(':memory:');
    const repo = hazardsRepository(db);
    repo.species.write('enz', 0, body('a'));
    repo.chemical.write('h2o2', 0, { source: 's', bands: [] });
    expect(() => db.prepare("UPDATE species_hazard_sets SET body = '{}'").run()).toThrow(/immutable/);
    expect(() => db.prepare('DELETE FROM species_hazard_sets').run()).toThrow(/never deleted/);
    expect(() => db.prepare("UPDATE hazard_sets SET author = 'x'").run()).toThrow(/immutable/);
    expect(() => db.prepare('DELETE FROM hazard_sets').run()).toThrow(/never deleted/);
    expect(() => db.prepare("INSERT INTO species_hazard_sets (species_key, version, body, author, created_at) VALUES ('enz', 1, '{}', 'x', 'now')").run()).toThrow(/this version exists/);
    expect(() => db.prepare("INSERT INTO species_hazard_sets (species_key, version, body, author, created_at) VALUES ('y', 1, 'not json', 'x', 'now')").run()).toThrow(/CHECK/);
  });
  it('a replacing insert cannot rewrite a version in place (0006: REPLACE skips delete triggers)', () => {
    const db = openDatabase(':memory:');
    const repo = hazardsRepository(db);
    repo.species.write('enz', 0, body('a'));
    repo.chemical.write('h2o2', 0, { source: 's', bands: [] });
    for (const sql of [
      "INSERT OR REPLACE INTO species_hazard_sets (species_key, version, body, author, created_at) VALUES ('enz', 1, '{}', 'x', 'now')",
      "REPLACE INTO species_hazard_sets (species_key, version, body, author, created_at) VALUES ('enz', 1, '{}', 'x', 'now')",
      "INSERT OR REPLACE INTO species_hazard_sets (id, species_key, version, body, author, created_at) VALUES (1, 'other', 1, '{}', 'x', 'now')",
      "INSERT OR REPLACE INTO hazard_sets (chemical_key, version, body, author, created_at) VALUES ('h2o2', 1, '{}', 'x', 'now')",
      "INSERT OR REPLACE INTO hazard_sets (id, chemical_key, version, body, author, created_at) VALUES (1, 'other', 1, '{}', 'x', 'now')",
    ]) {
      expect(() => db.prepare(sql).run(), sql).toThrow(/immutable: this version exists/);
    }
    expect(repo.species.current('enz')).toMatchObject({ version: 1, body: body('a') });
    expect(repo.chemical.current('h2o2')).toMatchObject({ version: 1, body: { source: 's', bands: [] } });
    expect(repo.species.current('other')).toBeNull();
    // the next version is still written as before
    expect(repo.species.write('enz', 1, body('b')).version).toBe(2);
  });
  it('a chemical and a species with the same key are kept apart; the top-level methods are the chemicals’', () => {
    const repo = hazardsRepository(openDatabase(':memory:'));
    repo.species.write('same', 0, body('species'));
    expect(repo.chemical.current('same')).toBeNull();
    expect(repo.current('same')).toBeNull();
    repo.write('same', 0, { source: 'chem', bands: [] });
    expect(repo.of('chemical').current('same')).toMatchObject({ kind: 'chemical', chemical: 'same', version: 1 });
    expect(repo.of('species').current('same')).toMatchObject({ kind: 'species', version: 1, body: body('species') });
  });
});
