/** Whole-shelf export and import: all or nothing, every bad entry by its path, round trip identical. */
import { readFileSync } from 'node:fs';
import { afterEach, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { freshApp } from '../helpers/app.js';

const demo = JSON.parse(readFileSync(new URL('../../seeds/demo-shelf.json', import.meta.url), 'utf8'));
const apps: App[] = [];
afterEach(async () => {
  while (apps.length) await apps.pop()!.close();
});
async function app(demoShelf = false) {
  const a = await freshApp({ demo: demoShelf });
  apps.push(a);
  return a;
}
/** A document without its time and the entries' exported revisions (numbered by each database: 2 in one, 1 in a fresh one). */
const without = (doc: Record<string, unknown>) => {
  const { exportedAt: _e, ...rest } = doc;
  const strip = (list: unknown) => (list as { revision?: number }[]).map(({ revision: _r, ...x }) => x);
  return { ...rest, chemicals: strip(rest.chemicals), species: strip(rest.species) };
};

describe('shelf export and import', () => {
  it('export → import into an empty shelf → export is identical', async () => {
    const a = await app(true);
    await a.inject({ method: 'POST', url: '/api/species/silica-1um-t01/retire', payload: {} });
    const first = (await a.inject({ method: 'GET', url: '/api/shelf/export' })).json();
    expect(first.species.length).toBe(8);
    expect(first.species.find((s: { id: string }) => s.id === 'silica-1um-t01').retired).toBe(true);
    const b = await app(false);
    const imp = await b.inject({ method: 'POST', url: '/api/shelf/import', payload: first });
    expect(imp.statusCode).toBe(200);
    expect(imp.json()).toEqual({ created: 11, revised: 0, unchanged: 0, overwritten: 0 });
    const second = (await b.inject({ method: 'GET', url: '/api/shelf/export' })).json();
    expect(without(second)).toEqual(without(first));
    // importing the same document again changes nothing
    expect((await b.inject({ method: 'POST', url: '/api/shelf/import', payload: first })).json()).toEqual({ created: 0, revised: 0, unchanged: 11, overwritten: 0 });
  });

  it('the demo shelf file imports and exports back as written', async () => {
    const a = await app(true);
    const out = (await a.inject({ method: 'GET', url: '/api/shelf/export' })).json();
    // each entry carries the revision it was exported at (1 here), which the hand-written file has not
    expect(new Set([...out.species, ...out.chemicals].map((x: { revision: number }) => x.revision))).toEqual(new Set([1]));
    const byId = (list: { id: string; revision?: number }[]) => Object.fromEntries(list.map(({ revision: _r, ...x }) => [x.id, x]));
    expect(byId(out.species)).toEqual(byId(demo.species.map((s: Record<string, unknown>) => JSON.parse(JSON.stringify(s, (k, v) => (k === 'product' && v === null ? null : v))))));
    expect(byId(out.chemicals)).toEqual(byId(demo.chemicals));
  });

  it('a bad import writes nothing and reports every bad entry by its path', async () => {
    const a = await app(false);
    const doc = JSON.parse(JSON.stringify(demo));
    doc.chemicals[1].diffusivity = '3 mM';
    doc.species[0].radius = '-1 um';
    doc.species[2].couplings[0].chemical = 'unobtainium';
    doc.species[4].kind = 'rock';
    doc.species.push({ ...doc.species[1] });
    const r = await a.inject({ method: 'POST', url: '/api/shelf/import', payload: doc });
    expect(r.statusCode).toBe(400);
    const paths = r.json().problems.map((p: { path: string }) => p.path);
    expect(paths).toEqual(
      expect.arrayContaining(['chemicals[1].diffusivity', 'species[0].radius', 'species[2].couplings[0].chemical', 'species[4].kind', 'species[8].id']),
    );
    expect(paths.length).toBe(5);
    const health = (await a.inject({ method: 'GET', url: '/api/health' })).json();
    expect(health).toMatchObject({ chemicals: 0, species: 0 });
  });

  it('refuses a document that is not a brink shelf', async () => {
    const a = await app(false);
    const r = await a.inject({ method: 'POST', url: '/api/shelf/import', payload: { format: 'other', version: 1 } });
    expect(r.statusCode).toBe(400);
    expect(r.json().problems[0].path).toBe('format');
  });

  it('an import revises changed items and keeps their history', async () => {
    const a = await app(true);
    const doc = (await a.inject({ method: 'GET', url: '/api/shelf/export' })).json();
    doc.species[0].diffusivity = { value: '0.25 um^2/s', sd: '0.02 um^2/s' };
    expect((await a.inject({ method: 'POST', url: '/api/shelf/import', payload: doc })).json()).toEqual({ created: 0, revised: 1, unchanged: 10, overwritten: 0 });
    const h = (await a.inject({ method: 'GET', url: `/api/species/${doc.species[0].id}/revisions` })).json();
    expect(h.revisions.map((x: { action: string }) => x.action)).toEqual(['import', 'import']);
    expect(h.revisions[1].record.diffusivity.input).toBe('0.25 um^2/s');
    expect(h.revisions[0].record.diffusivity.input).not.toBe('0.25 um^2/s');
  });

  it('an old export does not undo a newer edit: 409 per entry, nothing written, unless overwrite=true', async () => {
    const a = await app(true);
    const old = (await a.inject({ method: 'GET', url: '/api/shelf/export' })).json();
    const b07 = old.species.findIndex((s: { id: string }) => s.id === 'ptj-1um-b07');
    const h2o2 = old.chemicals.findIndex((c: { id: string }) => c.id === 'h2o2');
    // a colleague edits two items after the export
    const sp = (await a.inject({ method: 'GET', url: '/api/species/ptj-1um-b07' })).json();
    expect((await a.inject({ method: 'PUT', url: '/api/species/ptj-1um-b07', payload: { baseRevision: 1, record: { ...sp.typed, radius: '1.1 um' } } })).statusCode).toBe(200);
    const ch = (await a.inject({ method: 'GET', url: '/api/chemicals/h2o2' })).json();
    expect((await a.inject({ method: 'PUT', url: '/api/chemicals/h2o2', payload: { baseRevision: 1, record: { ...ch.typed, lossRate: '1e-5 1/s' } } })).statusCode).toBe(200);
    // the old file, with a new item and an edit of an untouched one, is imported
    const doc = JSON.parse(JSON.stringify(old));
    doc.species.push({ ...doc.species[b07], id: 'ptj-new', name: 'a new batch (invented)', revision: undefined });
    doc.species[0].name = doc.species[0].id === 'ptj-1um-b07' ? doc.species[0].name : `${doc.species[0].name} (renamed)`;
    const r = await a.inject({ method: 'POST', url: '/api/shelf/import', payload: doc });
    expect(r.statusCode).toBe(409);
    const body = r.json();
    expect(body.error).toBe('import-conflict');
    expect(body.conflicts).toEqual([
      { path: `chemicals[${h2o2}]`, type: 'chemical', id: 'h2o2', exportedRevision: 1, currentRevision: 2 },
      { path: `species[${b07}]`, type: 'species', id: 'ptj-1um-b07', exportedRevision: 1, currentRevision: 2 },
    ]);
    expect(body.message).toMatch(/was exported at revision 1, the shelf is at revision 2/);
    // all or nothing: the new item is not there, the edits stand
    expect((await a.inject({ method: 'GET', url: '/api/species/ptj-new' })).statusCode).toBe(404);
    expect((await a.inject({ method: 'GET', url: '/api/species/ptj-1um-b07' })).json()).toMatchObject({ revision: 2 });
    // asked to, the import replaces the newer edits, as new revisions that say so; the history keeps them
    const forced = await a.inject({ method: 'POST', url: '/api/shelf/import?overwrite=true', payload: doc });
    expect(forced.statusCode).toBe(200);
    expect(forced.json()).toMatchObject({ created: 1, overwritten: 2 });
    const h = (await a.inject({ method: 'GET', url: '/api/species/ptj-1um-b07/revisions' })).json().revisions;
    expect(h.map((x: { revision: number; action: string }) => [x.revision, x.action])).toEqual([
      [1, 'import'],
      [2, 'edit'],
      [3, 'import'],
    ]);
    expect(h[2].note).toMatch(/replaced revision 2, newer than the export \(exported at 1\), by overwrite/);
    expect(h[2].record.radius.input).toBe(h[0].record.radius.input);
    // an entry exported at the current revision is an ordinary edit
    const fresh = (await a.inject({ method: 'GET', url: '/api/shelf/export' })).json();
    fresh.species[b07].radius = '1.2 um';
    expect((await a.inject({ method: 'POST', url: '/api/shelf/import', payload: fresh })).json()).toMatchObject({ revised: 1, overwritten: 0 });
    // an entry that claims a revision the shelf never had (another database's export, or an edited number) is no
    // licence to overwrite: it conflicts like an old one (found in review: 999 went through)
    const claimed = (await a.inject({ method: 'GET', url: '/api/shelf/export' })).json();
    claimed.species[b07].radius = '1.3 um';
    claimed.species[b07].revision = 999;
    const refused = await a.inject({ method: 'POST', url: '/api/shelf/import', payload: claimed });
    expect(refused.statusCode).toBe(409);
    expect(refused.json().conflicts).toEqual([{ path: `species[${b07}]`, type: 'species', id: 'ptj-1um-b07', exportedRevision: 999, currentRevision: 4 }]);
    expect(refused.json().message).toMatch(/claims revision 999, which the shelf never had/);
    expect((await a.inject({ method: 'GET', url: '/api/species/ptj-1um-b07' })).json().record.radius.input).toBe('1.2 um');
  });

  it('an entry without an exported revision (format 1, the demo file) conflicts when its item exists and differs', async () => {
    const a = await app(true);
    const doc = JSON.parse(JSON.stringify(demo));
    expect(doc.version).toBe(1);
    // unchanged entries are no conflict: the demo file imports again as "unchanged"
    expect((await a.inject({ method: 'POST', url: '/api/shelf/import', payload: doc })).json()).toEqual({ created: 0, revised: 0, unchanged: 11, overwritten: 0 });
    doc.species[0].diffusivity = { value: '0.25 um^2/s', sd: '0.02 um^2/s' };
    const r = await a.inject({ method: 'POST', url: '/api/shelf/import', payload: doc });
    expect(r.statusCode).toBe(409);
    expect(r.json().conflicts).toEqual([{ path: 'species[0]', type: 'species', id: doc.species[0].id, exportedRevision: null, currentRevision: 1 }]);
    expect(r.json().message).toMatch(/carries no exported revision/);
    expect((await a.inject({ method: 'POST', url: '/api/shelf/import?overwrite=true', payload: doc })).json()).toEqual({ created: 0, revised: 1, unchanged: 10, overwritten: 1 });
    // a bad exported revision is a 400 naming the field
    const bad = (await a.inject({ method: 'GET', url: '/api/shelf/export' })).json();
    bad.species[1].revision = 0;
    const b = await a.inject({ method: 'POST', url: '/api/shelf/import', payload: bad });
    expect(b.statusCode).toBe(400);
    expect(b.json().problems).toEqual([{ path: 'species[1].revision', message: 'the revision it was exported at: a whole number from 1' }]);
  });
});
