/** The hazard data routes (server/http/routes/hazards.ts): chemicals and species, versions, 409, 404, 400, no data. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { NO_HAZARD_DATA_SENTENCE } from '../../server/protocol/hazards.js';
import { freshApp } from '../helpers/app.js';

let app: App;
beforeAll(async () => {
  app = await freshApp({ demo: true });
});
afterAll(async () => {
  await app.close();
});

describe('GET/PUT /api/species/:id/hazards', () => {
  it('reads the demo enzyme’s data (version 1, by form) and writes a new version; a stale base is 409', async () => {
    const cur = await app.inject({ method: 'GET', url: '/api/species/catalase-e3/hazards' });
    expect(cur.statusCode).toBe(200);
    const j = cur.json();
    expect(j).toMatchObject({ species: 'catalase-e3', current: { version: 1, author: 'demo seed' }, history: [{ version: 1 }] });
    expect(j.current.body.forms).toEqual(['powder', 'solution', 'suspension']);
    expect(j.noData).toBeUndefined();
    const next = { ...j.current.body, storage: 'freezer, -20 °C (invented)' };
    const w = await app.inject({ method: 'PUT', url: '/api/species/catalase-e3/hazards', payload: { baseVersion: 1, hazards: next, author: 'safety officer (invented)', note: 'storage' } });
    expect(w.statusCode).toBe(200);
    expect(w.json()).toMatchObject({ version: 2, author: 'safety officer (invented)', note: 'storage', body: { storage: 'freezer, -20 °C (invented)' } });
    const stale = await app.inject({ method: 'PUT', url: '/api/species/catalase-e3/hazards', payload: { baseVersion: 1, hazards: next } });
    expect(stale.statusCode).toBe(409);
    expect(stale.json()).toMatchObject({ error: 'stale-version', current: { version: 2 } });
    const after = (await app.inject({ method: 'GET', url: '/api/species/catalase-e3/hazards' })).json();
    expect(after.history.map((h: { version: number }) => h.version)).toEqual([1, 2]);
  });
  it('a species without data: 200, current null, and the words that send the reader to the SDS', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/species/silica-1um-t01/hazards' });
    expect(r.statusCode).toBe(200);
    expect(r.json()).toMatchObject({ species: 'silica-1um-t01', current: null, history: [], noData: NO_HAZARD_DATA_SENTENCE });
  });
  it('the first version needs baseVersion 0; the forms must be stated; bad codes are 400 with paths', async () => {
    const set = { source: 'invented test data', forms: ['suspension'], bands: [{ min: 0, max: null, statement: 'H317', text: 'May cause an allergic skin reaction.', hazardClass: 'Skin Sens. 1', pictograms: ['GHS07'], signal: 'Warning', precautionary: ['P280 Wear protective gloves.'], forms: ['suspension'] }] };
    expect((await app.inject({ method: 'PUT', url: '/api/species/silica-1um-t01/hazards', payload: { baseVersion: 1, hazards: set } })).statusCode).toBe(409);
    const noForms = await app.inject({ method: 'PUT', url: '/api/species/silica-1um-t01/hazards', payload: { baseVersion: 0, hazards: { ...set, forms: undefined } } });
    expect(noForms.statusCode).toBe(400);
    expect(noForms.json().problems.map((p: { path: string }) => p.path)).toContain('hazards.forms');
    const badForm = await app.inject({ method: 'PUT', url: '/api/species/silica-1um-t01/hazards', payload: { baseVersion: 0, hazards: { ...set, bands: [{ ...set.bands[0], forms: ['powder'] }] } } });
    expect(badForm.statusCode).toBe(400);
    expect(badForm.json().problems[0].path).toBe('hazards.bands[0].forms[0]');
    const ok = await app.inject({ method: 'PUT', url: '/api/species/silica-1um-t01/hazards', payload: { baseVersion: 0, hazards: set } });
    expect(ok.statusCode).toBe(200);
    expect(ok.json().version).toBe(1);
  });
  it('an unknown species is 404, for reading and writing', async () => {
    expect((await app.inject({ method: 'GET', url: '/api/species/ghost/hazards' })).statusCode).toBe(404);
    expect((await app.inject({ method: 'PUT', url: '/api/species/ghost/hazards', payload: { baseVersion: 0, hazards: { source: 's', forms: ['powder'], bands: [] } } })).statusCode).toBe(404);
  });
});

describe('GET/PUT /api/chemicals/:id/hazards (moved to routes/hazards.ts)', () => {
  it('reads and versions a chemical’s data; 409 on a stale base; no data says so', async () => {
    const cur = (await app.inject({ method: 'GET', url: '/api/chemicals/h2o2/hazards' })).json();
    expect(cur).toMatchObject({ chemical: 'h2o2', current: { version: 1, chemical: 'h2o2' } });
    const w = await app.inject({ method: 'PUT', url: '/api/chemicals/h2o2/hazards', payload: { baseVersion: 1, hazards: { ...cur.current.body, storage: 'vented cap' } } });
    expect(w.statusCode).toBe(200);
    expect(w.json().version).toBe(2);
    expect((await app.inject({ method: 'PUT', url: '/api/chemicals/h2o2/hazards', payload: { baseVersion: 1, hazards: cur.current.body } })).statusCode).toBe(409);
    const glucose = (await app.inject({ method: 'GET', url: '/api/chemicals/glucose/hazards' })).json();
    expect(glucose).toMatchObject({ current: null, noData: NO_HAZARD_DATA_SENTENCE });
    expect((await app.inject({ method: 'GET', url: '/api/chemicals/ghost/hazards' })).statusCode).toBe(404);
  });
  it('a species’ data cannot be written through the chemicals’ route and the other way round', async () => {
    expect((await app.inject({ method: 'GET', url: '/api/chemicals/catalase-e3/hazards' })).statusCode).toBe(404);
    expect((await app.inject({ method: 'GET', url: '/api/species/h2o2/hazards' })).statusCode).toBe(404);
  });
});
