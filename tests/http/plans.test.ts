/** Stored plans: same numbers later after the shelf changes; rerun from the current shelf; list, names, notes. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { baseModes, WORK_BUDGET } from '../../server/jobs/budget.js';
import { freshApp, speciesRecord } from '../helpers/app.js';
import { postPlan } from '../helpers/plans.js';

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
    const r = await postPlan(app, request);
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
    const rerun = await postPlan(app, undefined, `/api/plans/${id}/rerun`);
    expect(rerun.statusCode).toBe(201);
    expect(rerun.job).toMatchObject({ kind: 'plan', state: 'done', label: `${request.name} (rerun of plan ${id})` });
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
    expect(list.items[0].revision).toBe(1);
    const r = await app.inject({ method: 'PATCH', url: `/api/plans/${id}`, payload: { baseRevision: 1, name: 'renamed', notes: 'try 0.5x and 2x around the threshold', author: 'a student (invented)' } });
    expect(r.json()).toMatchObject({ name: 'renamed', notes: 'try 0.5x and 2x around the threshold', revision: 2 });
    expect(r.json().result).toEqual(stored.result);
    expect(() => app.db.prepare('UPDATE plans SET result = ? WHERE id = ?').run('{}', id)).toThrow(/immutable/);
    expect(() => app.db.prepare('DELETE FROM plans').run()).toThrow(/never deleted/);
  });

  it('names and notes are revisions: PATCH needs the current revision, the history keeps every one', async () => {
    const now = (await app.inject({ method: 'GET', url: `/api/plans/${id}` })).json();
    expect(now).toMatchObject({ name: 'renamed', revision: 2 });
    expect(now.history.map((h: { revision: number; name: string; author: string }) => [h.revision, h.name, h.author])).toEqual([
      [1, request.name, 'anonymous'],
      [2, 'renamed', 'a student (invented)'],
    ]);
    // a second client still at revision 1 is refused with the current name and notes
    const stale = await app.inject({ method: 'PATCH', url: `/api/plans/${id}`, payload: { baseRevision: 1, notes: 'an older idea' } });
    expect(stale.statusCode).toBe(409);
    expect(stale.json()).toMatchObject({ error: 'stale-revision', current: { revision: 2, name: 'renamed', notes: 'try 0.5x and 2x around the threshold' } });
    expect(stale.json().message).toMatch(/now at revision 2/);
    // only the notes: the name is kept
    const notes = (await app.inject({ method: 'PATCH', url: `/api/plans/${id}`, payload: { baseRevision: 2, notes: 'ordered more B07' } })).json();
    expect(notes).toMatchObject({ name: 'renamed', notes: 'ordered more B07', revision: 3 });
    // the same text again writes nothing
    expect((await app.inject({ method: 'PATCH', url: `/api/plans/${id}`, payload: { baseRevision: 3, notes: 'ordered more B07' } })).json().revision).toBe(3);
    expect((await app.inject({ method: 'PATCH', url: `/api/plans/${id}`, payload: { name: 'no base' } })).statusCode).toBe(400);
    expect((await app.inject({ method: 'PATCH', url: '/api/plans/999', payload: { baseRevision: 1, name: 'x' } })).statusCode).toBe(404);
    // below the API: the name cannot be changed without a revision, and revisions cannot be rewritten
    expect(() => app.db.prepare("UPDATE plans SET name = 'sneaky' WHERE id = ?").run(id)).toThrow(/only by a new revision/);
    expect(() => app.db.prepare("UPDATE plan_text_revisions SET name = 'sneaky'").run()).toThrow(/immutable/);
    expect(() => app.db.prepare('DELETE FROM plan_text_revisions').run()).toThrow(/immutable/);
  });

  it('errors: bad boundary, unknown candidate, unknown plan, candidate in the base', async () => {
    const bad = await postPlan(app, { ...request, boundary: 'sideways' });
    expect(bad.statusCode).toBe(400);
    expect(bad.json().problems[0].path).toBe('boundary');
    const ghost = await postPlan(app, { ...request, candidates: ['ghost'] });
    expect(ghost.json().problems).toEqual([{ path: 'candidates[0]', message: 'no species "ghost" on the shelf' }]);
    const dup = await postPlan(app, { ...request, candidates: ['ptj-1um-b09'] });
    expect(dup.json().problems[0].message).toMatch(/already in the base/);
    expect((await app.inject({ method: 'GET', url: '/api/plans/999' })).statusCode).toBe(404);
  });

  it('candidates "all" takes every active species not in the base', async () => {
    const r = await postPlan(app, { ...request, candidates: 'all', uncertainty: undefined, probabilityAt: undefined, stateMap: undefined });
    expect(r.statusCode).toBe(201);
    const ids = r.json().result.candidates.map((c: { species: string }) => c.species);
    expect(ids).toHaveLength(7);
    expect(ids).not.toContain('ptj-1um-b09');
  });

  it('a plan with h2o2 only: the "taken as 0" warnings are the plan\'s, and glucose oxidase says its substrate is absent', async () => {
    const r = await postPlan(app, { ...request, candidates: 'all', uncertainty: undefined, probabilityAt: undefined, stateMap: undefined });
    expect(r.statusCode).toBe(201);
    const p = r.json();
    // glucose (the oxidases' substrate) and o2 (the Pt colloids' product) were not given
    expect(p.result.warnings.filter((w: { code: string }) => w.code === 'no-concentration').map((w: { chemical: string }) => w.chemical)).toEqual(['glucose', 'o2']);
    expect(p.result.warnings[0].message).toMatch(/^no concentration given for "glucose": taken as 0\. It is the substrate of (gox-e1, goxb-2um-k11|goxb-2um-k11, gox-e1), which then turn nothing over\.$/);
    expect(p.result.warnings[1].message).toBe('no concentration given for "o2": taken as 0.');
    // A(0) = V·0/(K + 0) = 0: with glucose at 0 both oxidases turn nothing over (tests/references/planner-feedback.test.ts checks the spectrum)
    for (const id of ['gox-e1', 'goxb-2um-k11']) {
      const c = p.result.candidates.find((x: { species: string }) => x.species === id);
      expect(c).toMatchObject({ feasible: false, reason: 'substrate-absent' });
      expect(c.message).toMatch(/^its substrate glucose is absent from the mixture \(concentration 0\): it turns nothing over/);
      expect(c.message).not.toMatch(/narrower window/);
    }
    // candidate messages give doses per mL (the page's unit); the numbers stay SI
    const swim = p.result.candidates.find((x: { species: string }) => x.species === 'ptj-swim-0.5-s02');
    const early = swim.warnings.find((w: { code: string }) => w.code === 'earlier-instability');
    expect(early.message).toContain(`from ${(early.onset * 1e-6).toPrecision(3)} per mL`);
    expect(early.message).not.toMatch(/m⁻³/);
  });

  it('every candidate carries its dose path, first onset and warnings; the band its zeros', async () => {
    const r = await postPlan(app, { ...request, stateMap: undefined });
    expect(r.statusCode).toBe(201);
    const c = r.json().result.candidates;
    for (const x of c) {
      expect(Array.isArray(x.dosePath)).toBe(true);
      expect(x.dosePath[0].from).toBe(0);
      expect(x.dosePath[x.dosePath.length - 1].to).toBe(x.cap.density);
      x.dosePath.forEach((iv: { from: number; to: number; state: string }, i: number) => {
        expect(iv.from).toBeLessThan(iv.to);
        if (i > 0) expect(iv.state).not.toBe(x.dosePath[i - 1].state);
      });
      expect(x.firstOnset === null || typeof x.firstOnset.density === 'number').toBe(true);
      expect(Array.isArray(x.warnings)).toBe(true);
      expect(x.band).toMatchObject({ samples: 20, seed: 5 });
      expect(typeof x.band.alreadyPast).toBe('number');
      expect(Object.keys(x.band.aboveCap).sort()).toEqual(['median', 'p05', 'p95']);
    }
    // the same threshold shape as brink screen: the band's numbers beside the dose
    expect(c[0].threshold).toMatchObject({ anyDose: false, alreadyPast: c[0].band.alreadyPast, feasibleFraction: c[0].band.feasibleFraction, median: c[0].band.median, aboveCap: c[0].band.aboveCap });
    // the feasible one: its path turns at its threshold (a stationary screen of a one-sign mixture)
    expect(c[0].firstOnset.density).toBe(c[0].threshold.density);
    // the shelf's note that o2 (made by the Pt colloids) was not given, then what the base's own analysis finds:
    // its O2 passes solubility and the 1 µm, 2 g/mL colloids settle (Stokes drag; tests/references/sedimentation.test.ts)
    expect(r.json().result.warnings.map((w: { code: string; chemical?: string }) => `${w.code} ${w.chemical ?? '-'}`)).toEqual(['no-concentration o2', 'gas-exceeds-solubility o2', 'sedimentation -']);
  });

  it('a state map asked for a plan with no feasible candidate: the plan is stored without the map, with a warning', async () => {
    const r = await postPlan(app, { ...request, candidates: ['catb-0.22-l04', 'silica-1um-t01'], uncertainty: undefined, probabilityAt: undefined });
    expect(r.statusCode).toBe(201);
    const p = r.json();
    expect(p.result.candidates.every((c: { feasible: boolean }) => !c.feasible)).toBe(true);
    expect(p.result.stateMap).toBeNull();
    expect(p.result.warnings.map((w: { code: string }) => w.code)).toEqual(['no-concentration', 'gas-exceeds-solubility', 'sedimentation', 'no-state-map']);
    expect((await app.inject({ method: 'GET', url: `/api/plans/${p.id}` })).json().result.warnings.at(-1).message).toMatch(/no candidate crosses/);
  });
});

describe('candidates "all" on a shelf of more than 500 species', () => {
  let big: App;
  beforeAll(async () => {
    big = await freshApp({ demo: true });
    // 600 uncoupled species whose names sort before every demo species (the old cut took the first 500 by name)
    for (let i = 0; i < 600; i++) {
      const id = `aa-inert-${String(i).padStart(3, '0')}`;
      const r = await big.inject({ method: 'POST', url: '/api/species', payload: { record: { ...speciesRecord(id), name: `aa inert ${i}`, couplings: [] } } });
      if (r.statusCode !== 201) throw new Error(r.body);
    }
  });
  afterAll(async () => {
    await big.close();
  });

  it('takes every one of them (none is cut), and finds the feasible one after the first 500', async () => {
    const r = await postPlan(big, { ...request, candidates: 'all', uncertainty: undefined, probabilityAt: undefined, stateMap: undefined });
    expect(r.statusCode).toBe(201);
    const ids = r.json().result.candidates.map((c: { species: string }) => c.species);
    expect(ids).toHaveLength(600 + 7);
    // the feasible ones sort after the 600 by name, so a cut at 500 would have missed them
    expect(ids.slice(0, 2).sort()).toEqual(['ptj-1um-b07', 'ptj-swim-0.5-s02']);
    expect(r.json().result.candidates.slice(0, 2).every((c: { feasible: boolean }) => c.feasible)).toBe(true);
    expect(ids.filter((id: string) => id.startsWith('aa-inert-'))).toHaveLength(600);
  });

  it('refuses work above the budget with a 400 that names the numbers, before any job', async () => {
    const chamber = { walls: 'sealed', length: '20 mm', depth: '100 um' };
    // the modes the base's own general scan evaluates, for the base mixture as POST /api/analyze builds it from the shelf
    const mixture = (await big.inject({ method: 'POST', url: '/api/analyze', payload: { species: request.base, chemicals: request.chemicals, chamber } })).json().mixture;
    const modes = baseModes(mixture);
    expect(modes).toBeGreaterThan(1);
    // the most draws that fit (607 × (1 + draws) × modes ≤ the budget), and one more
    const fits = Math.floor(WORK_BUDGET / (607 * modes)) - 1;
    const samples = fits + 1;
    const work = 607 * (1 + samples) * modes;
    expect(work).toBeGreaterThan(WORK_BUDGET);
    expect(607 * (1 + fits) * modes).toBeLessThanOrEqual(WORK_BUDGET);
    const jobsBefore = (await big.inject({ method: 'GET', url: '/api/jobs' })).json().total;
    const r = await big.inject({ method: 'POST', url: '/api/plans', payload: { ...request, chamber, candidates: 'all', uncertainty: { samples, seed: 1 }, probabilityAt: undefined, stateMap: undefined } });
    expect(r.statusCode).toBe(400);
    const [p] = r.json().problems;
    expect(p.path).toBe('uncertainty.samples');
    expect(p.message).toContain(`${work.toExponential(3)} units of work`);
    expect(p.message).toContain(`"all" is 607 species on the shelf × (1 + ${samples} Monte Carlo draws) × ${modes} modes`);
    expect(p.message).toContain(`the budget is ${WORK_BUDGET.toExponential(3)}`);
    expect(p.message).toContain(`at most ${fits} Monte Carlo draws with these candidates`);
    expect((await big.inject({ method: 'GET', url: '/api/jobs' })).json().total).toBe(jobsBefore);
    expect((await big.inject({ method: 'GET', url: '/api/plans' })).json().total).toBe(1);
  });
});
