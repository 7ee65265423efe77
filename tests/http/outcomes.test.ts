/**
 * Outcomes of a bench sheet over HTTP (server/protocol/outcomes.ts, docs/model.md §12): entry as JSON, as the
 * filled-in sheet's JSON and as CSV; validation against the rebuilt sheet (codes, duplicates, states, units), the
 * delivered dose of every tube as the sheet computes it, immutable revisions with a base-revision check, and the
 * empirical threshold of the tubes on the dose path. The states entered are invented inputs (what a bench might
 * see); the checks are against the sheet's own tubes and the engine's quantal fit of the same counts.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { fitQuantal } from '../../server/engine/fit/quantal.js';
import { Random } from '../../server/engine/random.js';
import type { App } from '../../server/http/app.js';
import { crossed, disagreements } from '../../server/protocol/outcomes.js';
import type { Sheet } from '../../server/protocol/sheet.js';
import { loadMigrations, openDatabase } from '../../server/store/db.js';
import { outcomesRepository } from '../../server/store/outcomes.js';
import { plansRepository } from '../../server/store/plans.js';
import { freshApp } from '../helpers/app.js';
import { planRequest, postPlan } from '../helpers/plans.js';

let app: App;
let planId: number;
let threshold: number;
let sheet: Sheet;
const url = () => `/api/plans/${planId}/outcomes`;

beforeAll(async () => {
  app = await freshApp({ demo: true });
  const plan = (await postPlan(app, planRequest)).json();
  planId = plan.id;
  threshold = plan.result.candidates.find((c: { species: string }) => c.species === 'ptj-1um-b07').threshold.density;
  sheet = app.sheets.build(planId, {});
});
afterAll(async () => {
  await app.close();
});

const lids = () => sheet.tubes.flatMap((t) => t.tubes.map((lid) => ({ lid, kind: t.kind, dose: t.doseSi })));

describe('entering outcomes', () => {
  it('JSON: every tube recorded with its kind and delivered dose from the rebuilt sheet; units read; the rest listed as unobserved', async () => {
    expect(sheet.candidate.id).toBe('ptj-1um-b07');
    const series = lids().filter((t) => t.kind === 'series' || t.kind === 'no-dopant');
    const tubes = series.map((t) => (t.dose! > threshold ? { tube: t.lid, state: 'stationary', onsetTime: '12 min', patternLength: '0.4 mm', notes: 'bands' } : { tube: t.lid, state: 'stable' }));
    const r = await app.inject({ method: 'POST', url: url(), payload: { tubes, author: 'a student (invented)', note: 'first round' } });
    expect(r.statusCode).toBe(201);
    const set = r.json();
    expect(set.revision).toBe(1);
    expect(set.candidate).toBe('ptj-1um-b07');
    expect(set.sheetOptions).toEqual({ candidate: 'ptj-1um-b07' });
    expect(set.tubes.length).toBe(series.length);
    for (const t of set.tubes) {
      const s = series.find((x) => x.lid === t.tube)!;
      expect(t.kind).toBe(s.kind);
      expect(t.dose).toBe(s.dose);
      if (t.state === 'stationary') {
        expect(t.onsetTime).toBe(720);
        expect(t.patternLength).toBeCloseTo(4e-4, 15);
      } else expect([t.onsetTime, t.patternLength]).toEqual([null, null]);
    }
    // the delivered dose is the unrounded one the sheet prints to four figures
    const d1 = set.tubes.find((t: { tube: string }) => t.tube === 'D1a');
    expect(Number((d1.dose * 1e-6).toPrecision(4))).toBe(sheet.tubes.find((t) => t.code === 'D1')!.dose!.value);
    expect(set.unobserved).toEqual(['CFa', 'CFb', 'CFc', 'CAa', 'CAb', 'CAc']);
    expect(set.author).toBe('a student (invented)');
  });

  it('a tube that did not do what the sheet expected is named at entry, controls too (the update does not weigh them) (found in a walk-through)', async () => {
    const expected = new Map<string, string>();
    for (const t of sheet.tubes) for (const lid of t.tubes) expected.set(lid, sheet.outcomes.find((o) => o.tube === t.code)!.state!);
    const lid = lids().find((t) => t.kind === 'dopant-alone')!.lid;
    const other = expected.get(lid) === 'stable' ? 'stationary' : 'stable';
    const agreeing = lids().find((t) => t.kind === 'no-dopant')!.lid;
    // (on the sheet itself, not through a POST: the tests below build on the set written above)
    const tube = (t: string, state: string, kind: string) => ({ tube: t, kind, dose: null, state: state as 'stable', onsetTime: null, patternLength: null, notes: '' });
    const found = disagreements(sheet, [tube(lid, other, 'dopant-alone'), tube(agreeing, expected.get(agreeing)!, 'no-dopant'), tube(agreeing, 'unclear', 'no-dopant')]);
    expect(found).toEqual([{ tube: lid, kind: 'dopant-alone', expected: expected.get(lid), seen: other, message: expect.stringMatching(/does not weigh/) }]);
  });

  it('GET: the current set and the history; a new set needs the base revision (409 stale otherwise)', async () => {
    const g = await app.inject({ method: 'GET', url: url() });
    expect(g.statusCode).toBe(200);
    expect(g.json().current.revision).toBe(1);
    expect(g.json().history.length).toBe(1);
    const payload = { tubes: [{ tube: 'CFa', state: 'stable' }] };
    const none = await app.inject({ method: 'POST', url: url(), payload });
    expect(none.statusCode).toBe(409);
    expect(none.json().error).toBe('stale-revision');
    expect(none.json().message).toMatch(/send baseRevision 1/);
    const ok = await app.inject({ method: 'POST', url: url(), payload: { ...payload, baseRevision: 1 } });
    expect(ok.statusCode).toBe(201);
    expect(ok.json().revision).toBe(2);
    const stale = await app.inject({ method: 'POST', url: url(), payload: { ...payload, baseRevision: 1 } });
    expect(stale.statusCode).toBe(409);
    expect(stale.json().current.revision).toBe(2);
    const h = (await app.inject({ method: 'GET', url: `${url()}?candidate=ptj-1um-b07` })).json();
    expect(h.current.revision).toBe(2);
    expect(h.history.map((s: { revision: number }) => s.revision)).toEqual([1, 2]);
    // the storage API the model update reads
    const repo = outcomesRepository(app.db);
    const cur = repo.current(planId, 'ptj-1um-b07')!;
    expect(Object.keys(cur).sort()).toEqual(['author', 'candidate', 'createdAt', 'id', 'note', 'planId', 'revision', 'sheetOptions', 'tubes']);
    expect(Object.keys(cur.tubes[0]!).sort()).toEqual(['dose', 'kind', 'notes', 'onsetTime', 'patternLength', 'state', 'tube']);
    expect(repo.current(planId)!.id).toBe(cur.id);
    expect(repo.current(planId, 'catb-0.22-l04')).toBeNull();
  });

  it('400 naming the row and field: unknown code, duplicate, bad state, negative time, a stable tube with a pattern, bad sheet options', async () => {
    const before = outcomesRepository(app.db).history(planId).length;
    const post = (payload: unknown) => app.inject({ method: 'POST', url: `${url()}?baseRevision=2`, payload: payload as object });
    const cases: [unknown, string, RegExp][] = [
      [{ tubes: [{ tube: 'D9a', state: 'stable' }] }, 'tubes[0].tube', /unknown tube code "D9a": this sheet \(candidate ptj-1um-b07, 3 replicates\) has C0a/],
      [{ tubes: [{ tube: 'D1a', state: 'stable' }, { tube: 'D1a', state: 'stable' }] }, 'tubes[1].tube', /entered twice \(also at tubes\[0\]\)/],
      [{ tubes: [{ tube: 'D1a', state: 'clustered' }] }, 'tubes[0].state', /expected one of stable, stationary, oscillatory, unclear, got "clustered"/],
      [{ tubes: [{ tube: 'D1a', state: 'stationary', onsetTime: '-3 min' }] }, 'tubes[0].onsetTime', /cannot be negative/],
      [{ tubes: [{ tube: 'D1a', state: 'stationary', onsetTime: '3 mm' }] }, 'tubes[0].onsetTime', /time/],
      [{ tubes: [{ tube: 'D1a', state: 'stationary', patternLength: 0 }] }, 'tubes[0].patternLength', /must be positive/],
      [{ tubes: [{ tube: 'D1a', state: 'stable', patternLength: '1 mm' }] }, 'tubes[0].patternLength', /stable but with a pattern length/],
      [{ tubes: [{ tube: 'D1a', onsetTime: 60 }] }, 'tubes[0].state', /no state/],
      [{ sheet: { replicates: 0 }, tubes: [{ tube: 'D1a', state: 'stable' }] }, 'sheet.replicates', /./],
      [{ tubes: [] }, 'tubes', /./],
    ];
    for (const [payload, path, message] of cases) {
      const r = await post(payload);
      expect(r.statusCode, JSON.stringify(payload)).toBe(400);
      const p = r.json().problems.find((x: { path: string }) => x.path === path);
      expect(p, `${path} in ${r.body}`).toBeDefined();
      expect(p.message).toMatch(message);
    }
    // nothing was stored
    expect(outcomesRepository(app.db).history(planId).length).toBe(before);
    expect((await app.inject({ method: 'POST', url: '/api/plans/999/outcomes', payload: { tubes: [{ tube: 'C0a', state: 'stable' }] } })).statusCode).toBe(404);
  });

  it('CSV: columns by name with units in brackets, sheet options and the base revision in the query; errors name line and column', async () => {
    const csv = (text: string, q = '') => app.inject({ method: 'POST', url: `${url()}?candidate=ptj-1um-b07&replicates=2${q}`, payload: text, headers: { 'content-type': 'text/csv' } });
    const good = '\uFEFF' + ['tube, state, onset [min], length [um], notes', 'C0a, stable, , , ', 'D1a, stable, , , "clear, uniform"', 'D8b, stationary, 12, 400, bands at the walls #2', 'D4a, unclear, , , bubbles'].join('\n');
    const r = await csv(good, '&author=a%20technician%20(invented)&baseRevision=2');
    expect(r.statusCode, r.body).toBe(201);
    const set = r.json();
    expect(set.candidate).toBe('ptj-1um-b07');
    expect(set.revision).toBe(3);
    expect(set.sheetOptions).toEqual({ candidate: 'ptj-1um-b07', replicates: 2 });
    const d8 = set.tubes.find((t: { tube: string }) => t.tube === 'D8b');
    expect(d8.onsetTime).toBe(720);
    expect(d8.notes).toBe('bands at the walls #2'); // a # in a note is text, and a spreadsheet's byte-order mark is skipped
    expect(d8.patternLength).toBeCloseTo(4e-4, 15);
    expect(set.tubes.find((t: { tube: string }) => t.tube === 'D1a').notes).toBe('clear, uniform');
    expect(set.tubes.map((t: { tube: string }) => t.tube)).toEqual(['C0a', 'D1a', 'D4a', 'D8b']);
    expect(set.author).toBe('a technician (invented)');
    // the sheet with two replicates has no third lid
    const bad = await csv(['tube,state,onset [min],length [um],notes', 'D1c,stable,,,', 'D2a,sideways,,,', 'D3a,stationary,-1,,'].join('\n'), '&baseRevision=3');
    expect(bad.statusCode).toBe(400);
    const paths = bad.json().problems.map((p: { path: string }) => p.path);
    expect(paths).toEqual(['line 4, column 3 (onset [min])']);
    const bad2 = await csv(['tube,state,onset [min],length [um],notes', 'D1c,stable,,,', 'D2a,sideways,,,'].join('\n'), '&baseRevision=3');
    expect(bad2.json().problems.map((p: { path: string }) => p.path)).toEqual(['line 2, column 1 (tube)', 'line 3, column 2 (state)']);
    const noUnit = await csv('tube,state,onset,length [um]\nD1a,stable,,\n', '&baseRevision=3');
    expect(noUnit.json().problems[0]).toEqual({ path: 'line 1, column 3 (onset)', message: expect.stringMatching(/unit in brackets/) });
  });

  it('the filled-in sheet JSON: its request rebuilds the same tubes; a sheet printed with other options is refused', async () => {
    const printed = (await app.inject({ method: 'GET', url: `/api/plans/${planId}/sheet?format=json&replicates=1&candidate=ptj-1um-b07&operator=a%20student%20(invented)` })).json();
    expect(printed.request).toEqual({ replicates: 1, candidate: 'ptj-1um-b07', operator: 'a student (invented)' });
    const filled = { ...printed, observations: printed.observations.map((o: { tube: string }) => (o.tube === 'D8' ? { ...o, stateSeen: 'stationary', onsetTime: '15 min', patternLength: '0.3 mm', notes: 'spots' } : o.tube === 'C0' ? { ...o, stateSeen: 'stable' } : o)) };
    const r = await app.inject({ method: 'POST', url: `${url()}?baseRevision=3`, payload: filled });
    expect(r.statusCode, r.body).toBe(201);
    expect(r.json().tubes.map((t: { tube: string; state: string }) => [t.tube, t.state])).toEqual([['C0', 'stable'], ['D8', 'stationary']]);
    expect(r.json().author).toBe('a student (invented)');
    expect(r.json().unobserved.length).toBe(printed.observations.length - 2);
    // the same sheet with a dose edited: it no longer matches what its options rebuild
    const edited = { ...filled, tubes: filled.tubes.map((t: { code: string; dose: { value: number } }) => (t.code === 'D3' ? { ...t, dose: { ...t.dose, value: t.dose.value * 2 } } : t)) };
    const e = await app.inject({ method: 'POST', url: `${url()}?baseRevision=4`, payload: edited });
    expect(e.statusCode).toBe(400);
    expect(e.json().problems[0].path).toMatch(/^tubes\[\d+\]\.dose$/);
    const garbage = await app.inject({ method: 'POST', url: `${url()}?baseRevision=4`, payload: { ...filled, tubes: [null, 5] } });
    expect(garbage.statusCode).toBe(400);
    expect(garbage.json().problems[0].path).toBe('tubes[0].code');
    const noRequest = { ...filled, request: undefined };
    const n = await app.inject({ method: 'POST', url: `${url()}?baseRevision=4`, payload: noRequest });
    expect(n.statusCode).toBe(400);
    expect(n.json().problems[0].path).toBe('request');
  });
});

describe('the empirical threshold', () => {
  it('tubes on the dose path → crossed or not, unclear and controls left out and counted; the fit is the engine’s on those counts', async () => {
    // a fresh plan so the revision history is simple; states drawn around the plan's own threshold (invented inputs)
    const plan = (await postPlan(app, { ...planRequest, candidates: ['ptj-1um-b07'] })).json();
    const sh = app.sheets.build(plan.id, { replicates: 6 });
    const t50 = plan.result.candidates[0].threshold.density;
    const rng = new Random(77);
    const tubes: { tube: string; state: string }[] = [];
    for (const t of sh.tubes) {
      for (const lid of t.tubes) {
        if (t.kind === 'no-fuel') tubes.push({ tube: lid, state: 'stable' });
        else if (t.kind === 'dopant-alone') tubes.push({ tube: lid, state: 'stationary' });
        else {
          const p = t.doseSi! === 0 ? 0 : 1 / (1 + Math.pow(t50 / t.doseSi!, 4));
          tubes.push({ tube: lid, state: rng.uniform() < 0.05 ? 'unclear' : rng.uniform() < p ? 'stationary' : 'stable' });
        }
      }
    }
    const r = await app.inject({ method: 'POST', url: `/api/plans/${plan.id}/outcomes`, payload: { sheet: { replicates: 6 }, tubes } });
    expect(r.statusCode, r.body).toBe(201);
    const dr = await app.inject({ method: 'GET', url: `/api/plans/${plan.id}/outcomes/dose-response?link=probit` });
    expect(dr.statusCode, dr.body).toBe(200);
    const a = dr.json();
    expect(a.boundary).toBe('stationary');
    expect(a.controls.map((c: { tube: string }) => c.tube)).toEqual([...'abcdef'].map((x) => `CF${x}`).concat([...'abcdef'].map((x) => `CA${x}`)));
    const unclear = tubes.filter((t) => t.state === 'unclear').map((t) => t.tube);
    expect(a.unclear.tubes).toEqual(unclear);
    // the counts, by hand from what was entered
    const byDose = new Map<number, { n: number; y: number }>();
    for (const t of sh.tubes.filter((x) => x.kind === 'series' || x.kind === 'no-dopant')) {
      for (const lid of t.tubes) {
        const e = tubes.find((x) => x.tube === lid)!;
        if (e.state === 'unclear') continue;
        const g = byDose.get(t.doseSi!) ?? { n: 0, y: 0 };
        g.n++;
        if (e.state === 'stationary') g.y++;
        byDose.set(t.doseSi!, g);
      }
    }
    const doses = [...byDose.keys()].sort((x, y) => x - y);
    expect(a.groups.filter((g: { tubes: number }) => g.tubes > 0).map((g: { dose: number; tubes: number; responded: number }) => [g.dose, g.tubes, g.responded])).toEqual(doses.map((d) => [d, byDose.get(d)!.n, byDose.get(d)!.y]));
    const direct = fitQuantal(doses, doses.map((d) => byDose.get(d)!.n), doses.map((d) => byDose.get(d)!.y), { link: 'probit' });
    expect(direct.stop).toBe('converged');
    expect(a.fit.stop).toBe('converged');
    expect(a.fit.parameters.ed50.value / direct.parameters.ed50.value!).toBeCloseTo(1, 12);
    expect(a.fit.parameters.slope.sd / direct.parameters.slope.sd!).toBeCloseTo(1, 12);
    expect(a.ed50PerMl.value / (direct.parameters.ed50.value! * 1e-6)).toBeCloseTo(1, 12);
    expect(a.fit.parameters.ed50.unit).toBe('1/m^3');
    // the C0 tubes (dose 0) are left out of the log10 fit and said to be
    expect(a.fit.excluded[0].dose).toBe(0);
    expect(a.fit.excluded[0].tubes).toBe(6 - unclear.filter((t) => t.startsWith('C0')).length);
    expect(a.predicted.threshold).toBe(t50);
    // the 404/400 answers
    expect((await app.inject({ method: 'GET', url: `/api/plans/${plan.id}/outcomes/dose-response?link=weibull` })).statusCode).toBe(400);
    const none = await app.inject({ method: 'GET', url: `/api/plans/${plan.id}/outcomes/dose-response?candidate=catb-0.22-l04` });
    expect(none.statusCode).toBe(400);
    expect(none.json().problems[0].message).toMatch(/no outcomes entered/);
  });

  it('all-or-nothing outcomes are reported as separation, with the doses that bracket the switch, never as a fit', async () => {
    const s = outcomesRepository(app.db).current(planId, 'ptj-1um-b07')!;
    expect(s.revision).toBe(4);
    const r = (await app.inject({ method: 'GET', url: `/api/plans/${planId}/outcomes/dose-response?revision=1` })).json();
    expect(r.outcomesRevision).toBe(1);
    expect(r.fit.stop).toBe('separation');
    expect(r.fit.parameters.slope.value).toBeNull();
    const { from, to } = r.fit.parameters.ed50.bracket;
    expect(from).toBeLessThanOrEqual(threshold);
    expect(to).toBeGreaterThan(threshold);
    // per mL as the sheet prints doses, and four figures in the words (found in review: 17-digit SI)
    expect(r.ed50PerMl.bracket).toEqual({ from: from * 1e-6, to: to * 1e-6 });
    expect(r.fit.notes.join(" ")).toMatch(/separation/);
    expect(r.fit.notes.join(" ")).not.toMatch(/\d{10,}/);
  });

  it('what counts as crossed for each boundary', () => {
    expect([crossed('stationary', 'stationary'), crossed('oscillatory', 'stationary'), crossed('stable', 'stationary')]).toEqual([true, false, false]);
    expect([crossed('oscillatory', 'oscillatory'), crossed('stationary', 'oscillatory')]).toEqual([true, false]);
    expect([crossed('oscillatory', 'any'), crossed('stationary', 'any'), crossed('stable', 'any')]).toEqual([true, true, false]);
    expect([crossed('stable', 'restore'), crossed('stationary', 'restore')]).toEqual([true, false]);
    expect(crossed('unclear', 'any')).toBeNull();
  });
});

describe('storage', () => {
  it('outcome sets are immutable: UPDATE, DELETE and a replacing insert are refused', () => {
    const db = openDatabase(':memory:');
    expect(loadMigrations().some((m) => m.name.includes('outcomes'))).toBe(true);
    const plan = plansRepository(db).create({ name: 'p', notes: '', author: 'x', request: { boundary: 'stationary' }, inputs: {}, result: { candidates: [] }, rerunOf: null, revisions: [] });
    const repo = outcomesRepository(db);
    const tube = { tube: 'C0a', kind: 'no-dopant', dose: 0, state: 'stable' as const, onsetTime: null, patternLength: null, notes: '' };
    const s = repo.write({ planId: plan.id, candidate: 'c', sheetOptions: {}, tubes: [tube] }, 0);
    expect(() => db.prepare('UPDATE outcome_sets SET author = ? WHERE id = ?').run('y', s.id)).toThrow(/immutable/);
    expect(() => db.prepare('DELETE FROM outcome_sets WHERE id = ?').run(s.id)).toThrow(/never deleted/);
    expect(() => db.prepare("INSERT OR REPLACE INTO outcome_sets (id, plan_id, candidate, revision, sheet_options, tubes, author, created_at) VALUES (?, ?, 'c', 1, '{}', '[]', 'z', 'now')").run(s.id, plan.id)).toThrow(/immutable/);
    expect(() => db.prepare("REPLACE INTO outcome_sets (plan_id, candidate, revision, sheet_options, tubes, author, created_at) VALUES (?, 'c', 1, '{}', '[]', 'z', 'now')").run(plan.id)).toThrow(/immutable/);
    expect(repo.current(plan.id, 'c')!.tubes).toEqual([tube]);
    expect(() => repo.write({ planId: plan.id, candidate: 'c', sheetOptions: {}, tubes: [tube] }, 0)).toThrow(/revision 1, not 0/);
    expect(repo.write({ planId: plan.id, candidate: 'c', sheetOptions: {}, tubes: [tube] }, 1).revision).toBe(2);
    db.close();
  });
});
