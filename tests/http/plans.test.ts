/** Stored plans: same numbers later after the shelf changes; rerun from the current shelf; list, names, notes. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { freshApp } from '../helpers/app.js';

let app: App;
beforeAll(async () => {
  app = await freshApp({ demo: true });
});
afterAll(async () => {
  await app.close();
});

const request = {
  name: 'washed B09: what makes it cluster?',
  base: [{ id: 'ptj-1um-b09', volumeFraction: '0.1 percent' }],
  chemicals: { h2o2: '200 mM' },
  chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' },
  boundary: 'stationary',
  candidates: ['ptj-1um-b07', 'catb-0.22-l04', 'silica-1um-t01'],
  uncertainty: { samples: 20, seed: 5 },
  probabilityAt: ['2e-4 um^-3'],
  stateMap: { baseSteps: 4, doseSteps: 6 },
};

describe('plans', () => {
  let id = 0;
  let stored: { result: { candidates: { species: string; threshold: { density: number } | null; band: unknown }[] } };

  it('POST /api/plans runs the screen and stores request, revisions and results', async () => {
    const r = await app.inject({ method: 'POST', url: '/api/plans', payload: request });
    expect(r.statusCode).toBe(201);
    const p = r.json();
    id = p.id;
    expect(r.headers.location).toBe(`/api/plans/${id}`);
    expect(p.request).toEqual(request);
    expect(p.result.candidates.map((c: { species: string }) => c.species)).toEqual(['ptj-1um-b07', 'catb-0.22-l04', 'silica-1um-t01']);
    expect(p.result.candidates[0].feasible).toBe(true);
    expect(p.result.candidates[0].band.probability[0].density).toBeCloseTo(2e14, -3);
    expect(p.result.stateMap.candidate).toBe('ptj-1um-b07');
    // h2o2 and o2 (the Pt colloids make oxygen): both chemical revisions are recorded
    expect(p.revisions.map((r: { role: string }) => r.role).sort()).toEqual(['base', 'candidate', 'candidate', 'candidate', 'chemical', 'chemical']);
    stored = p;
  });

  it('GET returns the same numbers after the shelf is edited', async () => {
    const cur = (await app.inject({ method: 'GET', url: '/api/species/ptj-1um-b07' })).json();
    const typed = { ...cur.typed, couplings: [{ ...cur.typed.couplings[0], mobility: '80 um^2/(s*mM)' }, cur.typed.couplings[1]] };
    const edit = await app.inject({ method: 'PUT', url: '/api/species/ptj-1um-b07', payload: { baseRevision: cur.revision, record: typed } });
    expect(edit.statusCode).toBe(200);
    const later = (await app.inject({ method: 'GET', url: `/api/plans/${id}` })).json();
    expect(later.result).toEqual(stored.result);
    const rerun = await app.inject({ method: 'POST', url: `/api/plans/${id}/rerun` });
    expect(rerun.statusCode).toBe(201);
    const fresh = rerun.json();
    expect(fresh.rerunOf).toBe(id);
    const before = stored.result.candidates[0]!.threshold!.density;
    const after = fresh.result.candidates[0].threshold.density;
    // a stronger mobility tips the base at a smaller dose
    expect(after).toBeLessThan(before);
    expect(fresh.revisions.find((r: { role: string; revisionId: number }) => r.role === 'candidate' && r.revisionId === edit.json().revisionId)).toBeDefined();
  });

  it('lists, renames and annotates plans; the results cannot change', async () => {
    const list = (await app.inject({ method: 'GET', url: '/api/plans' })).json();
    expect(list.total).toBe(2);
    expect(list.items[0].id).toBeGreaterThan(list.items[1].id);
    const r = await app.inject({ method: 'PATCH', url: `/api/plans/${id}`, payload: { name: 'renamed', notes: 'try 0.5x and 2x around the threshold' } });
    expect(r.json()).toMatchObject({ name: 'renamed', notes: 'try 0.5x and 2x around the threshold' });
    expect(r.json().result).toEqual(stored.result);
    expect(() => app.db.prepare('UPDATE plans SET result = ? WHERE id = ?').run('{}', id)).toThrow(/immutable/);
    expect(() => app.db.prepare('DELETE FROM plans').run()).toThrow(/never deleted/);
  });

  it('errors: bad boundary, unknown candidate, unknown plan, candidate in the base', async () => {
    const bad = await app.inject({ method: 'POST', url: '/api/plans', payload: { ...request, boundary: 'sideways' } });
    expect(bad.statusCode).toBe(400);
    expect(bad.json().problems[0].path).toBe('boundary');
    const ghost = await app.inject({ method: 'POST', url: '/api/plans', payload: { ...request, candidates: ['ghost'] } });
    expect(ghost.json().problems).toEqual([{ path: 'candidates[0]', message: 'no species "ghost" on the shelf' }]);
    const dup = await app.inject({ method: 'POST', url: '/api/plans', payload: { ...request, candidates: ['ptj-1um-b09'] } });
    expect(dup.json().problems[0].message).toMatch(/already in the base/);
    expect((await app.inject({ method: 'GET', url: '/api/plans/999' })).statusCode).toBe(404);
  });

  it('candidates "all" takes every active species not in the base', async () => {
    const r = await app.inject({ method: 'POST', url: '/api/plans', payload: { ...request, candidates: 'all', uncertainty: undefined, probabilityAt: undefined, stateMap: undefined } });
    expect(r.statusCode).toBe(201);
    const ids = r.json().result.candidates.map((c: { species: string }) => c.species);
    expect(ids).toHaveLength(7);
    expect(ids).not.toContain('ptj-1um-b09');
  });
});
