/**
 * The shelf over HTTP (fastify inject on a fresh in-memory database): every
 * endpoint's happy path and its errors, revisions, retire/restore, lost-update
 * protection.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { loadMigrations } from '../../server/store/db.js';
import { chemicalRecord, freshApp, speciesRecord } from '../helpers/app.js';

let app: App;
beforeAll(async () => {
  app = await freshApp();
});
afterAll(async () => {
  await app.close();
});

const post = (url: string, payload: unknown) => app.inject({ method: 'POST', url, payload: payload as object });
const put = (url: string, payload: unknown) => app.inject({ method: 'PUT', url, payload: payload as object });
const get = (url: string) => app.inject({ method: 'GET', url });

describe('chemicals and species: create and read', () => {
  it('creates a chemical (201, revision 1, SI value with the input kept)', async () => {
    const r = await post('/api/chemicals', { record: chemicalRecord(), author: 'tester' });
    expect(r.statusCode).toBe(201);
    expect(r.headers.location).toBe('/api/chemicals/fuel');
    const body = r.json();
    expect(body).toMatchObject({ id: 'fuel', type: 'chemical', revision: 1, current: true, action: 'create', retired: false, author: 'tester' });
    expect(body.record.diffusivity).toEqual({ si: 1.4e-9, sd: 0, unit: 'm^2/s', input: '1.4e-9 m^2/s' });
    expect(body.typed.diffusivity).toBe('1.4e-9 m^2/s');
  });

  it('creates a species with uncertainty and provenance on a value', async () => {
    const r = await post('/api/species', { record: speciesRecord() });
    expect(r.statusCode).toBe(201);
    const d = r.json().record.diffusivity;
    expect(d.si).toBeCloseTo(0.22e-12, 25);
    expect(d.sd).toBeCloseTo(0.02e-12, 25);
    expect(d.provenance).toMatchObject({ source: 'measured', date: '2026-11-02' });
    expect(r.json().typed.diffusivity).toEqual(speciesRecord().diffusivity);
  });

  it('reads the current revision, 404 for an unknown id', async () => {
    expect((await get('/api/species/bead')).json().revision).toBe(1);
    const r = await get('/api/species/nope');
    expect(r.statusCode).toBe(404);
    expect(r.json()).toEqual({ error: 'not-found', message: 'no species "nope" on the shelf' });
    expect((await get('/api/chemicals/nope/revisions')).statusCode).toBe(404);
    expect((await get('/api/species/bead/revisions/9')).statusCode).toBe(404);
  });

  it('400 names the field: bad unit, wrong dimension, missing field, unknown chemical, bad enum', async () => {
    const wrongDim = await post('/api/species', { record: speciesRecord('b2', { diffusivity: '3 mM' }) });
    expect(wrongDim.statusCode).toBe(400);
    expect(wrongDim.json()).toMatchObject({ error: 'invalid-input', problems: [{ path: 'record.diffusivity', message: 'expected length^2/time, got "3 mM" (amount/length^3)' }] });
    const badUnit = await post('/api/species', { record: speciesRecord('b2', { radius: '1 furlong' }) });
    expect(badUnit.json().problems[0].path).toBe('record.radius');
    const { radius: _r, ...noRadius } = speciesRecord('b2');
    const missing = await post('/api/species', { record: noRadius });
    expect(missing.json().problems).toEqual([{ path: 'record.radius', message: 'missing' }]);
    const unknownChem = await post('/api/species', { record: speciesRecord('b2', { couplings: [{ chemical: 'nothing', mobility: '1 um^2/(s*mM)' }] }) });
    expect(unknownChem.statusCode).toBe(400);
    expect(unknownChem.json().problems).toEqual([{ path: 'record.couplings[0].chemical', message: 'unknown chemical "nothing"' }]);
    const kind = await post('/api/species', { record: speciesRecord('b2', { kind: 'rock' }) });
    expect(kind.json().problems[0].path).toBe('record.kind');
    const negative = await post('/api/chemicals', { record: chemicalRecord('neg', '-1 um^2/s') });
    expect(negative.json().problems[0]).toEqual({ path: 'record.diffusivity', message: 'must be positive, got "-1 um^2/s"' });
    const notJson = await app.inject({ method: 'POST', url: '/api/species', payload: '{ nope', headers: { 'content-type': 'application/json' } });
    expect(notJson.statusCode).toBe(400);
    expect(notJson.json().error).toBe('bad-request');
  });

  it('409 on a duplicate id', async () => {
    const r = await post('/api/chemicals', { record: chemicalRecord() });
    expect(r.statusCode).toBe(409);
    expect(r.json()).toMatchObject({ error: 'duplicate', existing: { id: 'fuel', revision: 1 } });
  });
});

describe('revisions and lost updates', () => {
  it('an edit makes revision 2; the old one stays readable; history lists both', async () => {
    const r = await put('/api/species/bead', { baseRevision: 1, record: speciesRecord('bead', { radius: '1.05 um' }), note: 'remeasured by DLS' });
    expect(r.statusCode).toBe(200);
    expect(r.json()).toMatchObject({ revision: 2, action: 'edit', note: 'remeasured by DLS' });
    const old = (await get('/api/species/bead/revisions/1')).json();
    expect(old.record.radius.input).toBe('1 um');
    expect(old.current).toBe(false);
    const h = (await get('/api/species/bead/revisions')).json();
    expect(h.revisions.map((x: { revision: number }) => x.revision)).toEqual([1, 2]);
    expect(h.revisions[1].record.radius.input).toBe('1.05 um');
  });

  it('a stale edit answers 409 with the current revision in the body, and changes nothing', async () => {
    const r = await put('/api/species/bead', { baseRevision: 1, record: speciesRecord('bead', { radius: '2 um' }) });
    expect(r.statusCode).toBe(409);
    expect(r.json().error).toBe('stale-revision');
    expect(r.json().current).toMatchObject({ id: 'bead', revision: 2 });
    expect(r.json().current.record.radius.input).toBe('1.05 um');
    expect((await get('/api/species/bead')).json().revision).toBe(2);
  });

  it('an edit may not change the id, and must carry baseRevision', async () => {
    const r = await put('/api/species/bead', { baseRevision: 2, record: speciesRecord('other') });
    expect(r.statusCode).toBe(400);
    expect(r.json().problems[0].path).toBe('record.id');
    const n = await put('/api/species/bead', { record: speciesRecord('bead') });
    expect(n.statusCode).toBe(400);
    expect(n.json().problems[0]).toEqual({ path: 'baseRevision', message: 'missing (expected number, received undefined)' });
    expect((await put('/api/species/ghost', { baseRevision: 1, record: speciesRecord('ghost') })).statusCode).toBe(404);
  });
});

describe('retire and restore', () => {
  it('retiring hides from lists but keeps the item readable; restore brings it back; both are revisions', async () => {
    const r = await post('/api/species/bead/retire', { baseRevision: 2, note: 'batch used up' });
    expect(r.statusCode).toBe(200);
    expect(r.json()).toMatchObject({ revision: 3, action: 'retire', retired: true });
    expect((await get('/api/species')).json().items.map((x: { id: string }) => x.id)).not.toContain('bead');
    expect((await get('/api/species?includeRetired=true')).json().items.map((x: { id: string }) => x.id)).toContain('bead');
    expect((await get('/api/species/bead')).json().retired).toBe(true);
    const back = await post('/api/species/bead/restore', {});
    expect(back.json()).toMatchObject({ revision: 4, action: 'restore', retired: false });
    expect((await get('/api/species')).json().items.map((x: { id: string }) => x.id)).toContain('bead');
    // a stale retire is refused like a stale edit
    expect((await post('/api/species/bead/retire', { baseRevision: 1 })).statusCode).toBe(409);
    // retiring twice is a no-op, not a new revision
    await post('/api/species/bead/retire', {});
    expect((await post('/api/species/bead/retire', {})).json().revision).toBe(5);
    await post('/api/species/bead/restore', {});
  });
});

describe('list: search and pagination', () => {
  it('finds by id or name, filters by kind, pages with total', async () => {
    for (const id of ['alpha', 'beta', 'gamma', 'delta']) await post('/api/species', { record: speciesRecord(`janus-${id}`, { name: `Janus ${id}` }) });
    await post('/api/species', { record: speciesRecord('enz-1', { kind: 'enzyme', name: 'enzyme one' }) });
    const all = (await get('/api/species?q=janus')).json();
    expect(all.total).toBe(4);
    const p1 = (await get('/api/species?q=janus&limit=2&offset=0')).json();
    const p2 = (await get('/api/species?q=janus&limit=2&offset=2')).json();
    expect(p1.items.length).toBe(2);
    expect(p2.items.length).toBe(2);
    expect(new Set([...p1.items, ...p2.items].map((x: { id: string }) => x.id)).size).toBe(4);
    expect((await get('/api/species?kind=enzyme')).json().items.map((x: { id: string }) => x.id)).toEqual(['enz-1']);
    expect((await get('/api/species?q=%25')).json().total).toBe(0); // LIKE wildcards are literal
    expect((await get('/api/species?limit=0')).statusCode).toBe(400);
    expect((await get('/api/species?limit=abc')).json().problems[0].path).toBe('limit');
  });
});

describe('service facts', () => {
  it('health, the mixture schema, OpenAPI at /api/docs, the landing page, unknown routes', async () => {
    expect((await get('/api/health')).json()).toMatchObject({ ok: true, schemaVersion: loadMigrations().length });
    expect((await get('/api/schema/mixture')).json().title).toBe('brink mixture file');
    const doc = (await get('/api/docs/json')).json();
    expect(doc.openapi).toMatch(/^3\./);
    expect(Object.keys(doc.paths)).toEqual(expect.arrayContaining(['/api/species', '/api/species/{id}', '/api/shelf/import', '/api/analyze']));
    expect((await get('/api/docs/')).statusCode).toBe(200);
    const page = await get('/');
    expect(page.headers['content-type']).toMatch(/text\/html/);
    expect(page.body).toMatch(/<title>[^<]*brink<\/title>/);
    const nf = await get('/api/nothing');
    expect(nf.statusCode).toBe(404);
    expect(nf.json().error).toBe('not-found');
  });
});
