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
const without = (doc: Record<string, unknown>) => {
  const { exportedAt: _e, ...rest } = doc;
  return rest;
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
    expect(imp.json()).toEqual({ created: 11, revised: 0, unchanged: 0 });
    const second = (await b.inject({ method: 'GET', url: '/api/shelf/export' })).json();
    expect(without(second)).toEqual(without(first));
    // importing the same document again changes nothing
    expect((await b.inject({ method: 'POST', url: '/api/shelf/import', payload: first })).json()).toEqual({ created: 0, revised: 0, unchanged: 11 });
  });

  it('the demo shelf file imports and exports back as written', async () => {
    const a = await app(true);
    const out = (await a.inject({ method: 'GET', url: '/api/shelf/export' })).json();
    const byId = (list: { id: string }[]) => Object.fromEntries(list.map((x) => [x.id, x]));
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
    const doc = JSON.parse(JSON.stringify(demo));
    doc.species[0].diffusivity = { value: '0.25 um^2/s', sd: '0.02 um^2/s' };
    expect((await a.inject({ method: 'POST', url: '/api/shelf/import', payload: doc })).json()).toEqual({ created: 0, revised: 1, unchanged: 10 });
    const h = (await a.inject({ method: 'GET', url: `/api/species/${doc.species[0].id}/revisions` })).json();
    expect(h.revisions.map((x: { action: string }) => x.action)).toEqual(['import', 'import']);
    expect(h.revisions[0].record.diffusivity.input).toBe('0.22 um^2/s');
  });
});
