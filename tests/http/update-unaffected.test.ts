/**
 * The model update never moves what the tubes cannot tell (docs/model.md §13; found by a new-user walkthrough):
 * a plan over the demo shelf with candidates "all" (base ptj-1um-b09, h2o2 200 mM) carries glucose (a glucose
 * oxidase candidate's fuel) and o2 (made by the Janus particles, moved in by nobody) in its base mixture. The
 * tubes of ptj-1um-b07 hold b09, b07 and h2o2; o2 is made in them but moves no particle. An apply once wrote
 * glucose's and o2's diffusivity and b09's activity on o2 from Monte Carlo noise; now they are never drawn,
 * never reported as updated, never written, and the answer lists them as kept with the reason.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { stateOf } from '../../server/engine/analyze.js';
import { withDose } from '../../server/engine/planner.js';
import type { Mixture, Species } from '../../server/engine/types.js';
import { buildApp } from '../../server/http/app.js';
import type { OutcomeSet } from '../../server/outcomes/update.js';
import { seedDemoShelf } from '../../server/shelf/seed.js';
import { openDatabase } from '../../server/store/db.js';
import { planRequest, postPlan } from '../helpers/plans.js';

type App = Awaited<ReturnType<typeof buildApp>>;
const ENDED = new Set(['done', 'failed', 'cancelled', 'timed-out']);

async function waitJob(app: App, id: string) {
  for (let i = 0; i < 6000; i++) {
    const j = (await app.inject({ method: 'GET', url: `/api/jobs/${id}` })).json();
    if (ENDED.has(j.state)) return j;
    await new Promise((r) => setTimeout(r, 20));
  }
  throw new Error(`job ${id} did not end`);
}

interface Named {
  owner?: string;
  type?: string;
  id?: string;
  key?: string;
  field: string;
  chemical: string | null;
}
const name = (c: Named) => `${c.owner ?? c.type} ${c.id ?? c.key} ${c.field}${c.chemical ? ` on ${c.chemical}` : ''}`;

describe('an update from the demo shelf with candidates "all": only what the tubes can tell', () => {
  let app: App;
  const sets = new Map<number, OutcomeSet>();
  let planId = 0;
  const candidate = 'ptj-1um-b07';
  beforeAll(async () => {
    const db = openDatabase(':memory:');
    seedDemoShelf(db);
    app = await buildApp({ config: { closeDatabase: true }, db, readOutcomes: (id) => sets.get(id) ?? null });
    const plan = await postPlan(app, { ...planRequest, candidates: 'all', uncertainty: { samples: 60, seed: 5 } });
    expect(plan.statusCode, plan.body).toBe(201);
    const p = plan.json();
    planId = p.id;
    const base = p.inputs.base as Mixture;
    expect(base.chemicals.map((c) => c.id).sort()).toEqual(['glucose', 'h2o2', 'o2']);
    const d = (p.inputs.candidates as Species[]).find((c) => c.id === candidate)!;
    const median = p.result.candidates.find((c: { species: string }) => c.species === candidate).band.median as number;
    // the tubes: the states the engine predicts at the nominal coefficients (consistent outcomes)
    const doses = [0, 0.5, 0.8, 1.25, 1.6, 2].map((f) => f * median);
    sets.set(planId, {
      id: 1,
      revision: 1,
      candidate,
      tubes: doses.map((x, i) => ({ tube: i === 0 ? 'C0' : `D${i}`, kind: i === 0 ? 'no-dopant' : 'series', dose: x, state: stateOf(withDose(base, d, x, 'add')), onsetTime: null, patternLength: null })),
    });
  }, 120_000);
  afterAll(async () => app.close());

  it('never draws, reports or writes glucose, o2 or the activities on o2; lists them as kept with the reason', async () => {
    const unaffectedExpected = ['chemical glucose diffusivity', 'chemical o2 diffusivity', 'species ptj-1um-b09 rate on o2', 'species ptj-1um-b07 rate on o2'];
    const r = await app.inject({ method: 'POST', url: `/api/plans/${planId}/update`, payload: {} });
    expect(r.statusCode).toBe(202);
    const job = await waitJob(app, r.json().id);
    expect(job.state, JSON.stringify(job.error)).toBe('done');
    const u = job.result.update;
    expect(u.consistency.consistent).toBe(true);
    const unaffected = u.unaffected as (Named & { reason: string })[];
    expect(unaffected.map(name).sort()).toEqual([...unaffectedExpected].sort());
    const reasonOf = (n: string) => unaffected.find((c) => name(c) === n)!.reason;
    expect(reasonOf('chemical glucose diffusivity')).toMatch(/no species in the tubes couples to glucose/);
    expect(reasonOf('chemical o2 diffusivity')).toMatch(/no species in the tubes moves in o2/);
    expect(reasonOf('species ptj-1um-b09 rate on o2')).toMatch(/moves in o2/);
    // the update reports only what the tubes' model depends on: h2o2 and the two species' couplings to it
    const reported = (u.coefficients as Named[]).map(name);
    for (const n of unaffectedExpected) expect(reported).not.toContain(n);
    for (const n of ['chemical h2o2 diffusivity', 'species ptj-1um-b09 mobility on h2o2', 'species ptj-1um-b07 mobility on h2o2', 'species ptj-1um-b07 rate on h2o2']) expect(reported).toContain(n);

    const before = {
      glucose: (await app.inject({ method: 'GET', url: '/api/chemicals/glucose' })).json(),
      o2: (await app.inject({ method: 'GET', url: '/api/chemicals/o2' })).json(),
    };
    const applied = await app.inject({ method: 'POST', url: `/api/plans/${planId}/update/apply`, payload: { job: job.id, author: 'a student (invented)' } });
    expect(applied.statusCode, applied.body).toBe(201);
    const a = applied.json();
    const written = (a.revisions as { type: string; key: string; changes: { field: string; chemical: string | null }[] }[]).flatMap((rev) => rev.changes.map((ch) => name({ type: rev.type, key: rev.key, ...ch })));
    for (const n of unaffectedExpected) expect(written).not.toContain(n);
    expect((a.revisions as { key: string }[]).map((x) => x.key)).not.toContain('glucose');
    expect((a.revisions as { key: string }[]).map((x) => x.key)).not.toContain('o2');
    const kept = a.kept as (Named & { reason: string })[];
    for (const n of unaffectedExpected) {
      const k = kept.find((x) => name(x) === n);
      expect(k, n).toBeDefined();
      expect(k!.reason).toMatch(/^not updated: .*(couples to|moves in).*the shelf value stands$/);
    }
    // glucose and o2 are as the shelf had them: same revision, same record
    const after = {
      glucose: (await app.inject({ method: 'GET', url: '/api/chemicals/glucose' })).json(),
      o2: (await app.inject({ method: 'GET', url: '/api/chemicals/o2' })).json(),
    };
    expect(after.glucose.revision).toBe(before.glucose.revision);
    expect(after.o2.revision).toBe(before.o2.revision);
    expect(after.glucose.record).toEqual(before.glucose.record);
    expect(after.o2.record).toEqual(before.o2.record);
    // b09 and b07 may have moved (mobility on h2o2), but their activity on o2 is the shelf's, as before
    for (const id of ['ptj-1um-b09', 'ptj-1um-b07']) {
      const sp = (await app.inject({ method: 'GET', url: `/api/species/${id}` })).json();
      const o2 = sp.record.couplings.find((c: { chemical: string }) => c.chemical === 'o2');
      expect(JSON.stringify(o2.activity)).not.toMatch(/estimated|model update/);
    }
  }, 180_000);
});
