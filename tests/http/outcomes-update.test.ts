/**
 * The model-update routes over the demo shelf: plan → outcomes (a reader injected here, standing for the
 * outcome storage) → update job → apply (species revisions whose provenance names the plan and the outcome
 * set) → next (design job, new plan). The outcomes are the states the engine predicts at the plan's nominal
 * coefficients (analyze.ts stateOf), so the update must find them consistent; the reversed outcomes must be
 * flagged and refused on apply.
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

describe('POST /api/plans/:id/update, /update/apply, /next', () => {
  let app: App;
  const sets = new Map<number, OutcomeSet>();
  let planId = 0;
  const candidate = 'ptj-1um-b07';
  beforeAll(async () => {
    const db = openDatabase(':memory:');
    seedDemoShelf(db);
    app = await buildApp({ config: { closeDatabase: true }, db, readOutcomes: (id) => sets.get(id) ?? null });
    const plan = await postPlan(app, { ...planRequest, candidates: [candidate], uncertainty: { samples: 60, seed: 5 } });
    expect(plan.statusCode).toBe(201);
    const p = plan.json();
    planId = p.id;
    const base = p.inputs.base as Mixture;
    const d = (p.inputs.candidates as Species[]).find((c) => c.id === candidate)!;
    const median = p.result.candidates[0].band.median as number;
    const doses = [0, 0.5, 0.8, 1.25, 1.6, 2].map((f) => f * median);
    sets.set(planId, {
      id: 1,
      revision: 1,
      candidate,
      tubes: [
        ...doses.map((x, i) => ({ tube: i === 0 ? 'C0' : `D${i}`, kind: i === 0 ? 'no-dopant' : 'series', dose: x, state: stateOf(withDose(base, d, x, 'add')), onsetTime: null, patternLength: null })),
        { tube: 'CF', kind: 'no-fuel', dose: 2 * median, state: 'stable' as const, onsetTime: null, patternLength: null },
        { tube: 'D9', kind: 'series', dose: null, state: 'stationary' as const, onsetTime: null, patternLength: null },
      ],
    });
  }, 120_000);
  afterAll(async () => app.close());

  it('updates, applies as revisions with provenance, and designs the next round', async () => {
    const r = await app.inject({ method: 'POST', url: `/api/plans/${planId}/update`, payload: { misclassification: 0.05 } });
    expect(r.statusCode).toBe(202);
    const job = await waitJob(app, r.json().id);
    expect(job.state).toBe('done');
    const u = job.result;
    expect(u.ignored.map((x: { tube: string }) => x.tube)).toEqual(['CF', 'D9']);
    expect(u.ignored[1].reason).toBe('no delivered dose');
    expect(u.priorFrom).toBe('plan');
    expect(['importance', 'smc']).toContain(u.update.method);
    expect(u.update.consistency.consistent).toBe(true);
    expect(u.update.bands[0].species).toBe(candidate);
    const applied = await app.inject({ method: 'POST', url: `/api/plans/${planId}/update/apply`, payload: { job: job.id, author: 'a student (invented)' } });
    expect(applied.statusCode, applied.body).toBe(201);
    const revs = applied.json().revisions as { type: string; key: string; revisionId: number; changes: { field: string; chemical: string | null }[] }[];
    expect(revs.length).toBeGreaterThan(0);
    // only what the outcomes informed is written; the rest is listed as kept, each barely moved (found in review:
    // a literature diffusivity was overwritten with Monte Carlo noise marked "estimated")
    const kept = applied.json().kept as { type: string; key: string; field: string; chemical: string | null }[];
    const coeffs = u.update.coefficients as { owner: string; id: string; field: string; chemical: string | null; value: number; sd: number; posteriorMean: number; posteriorSd: number }[];
    const find = (k: { type?: string; owner?: string; key?: string; id?: string; field: string; chemical: string | null }) =>
      coeffs.find((c) => c.owner === (k.type ?? k.owner) && c.id === (k.key ?? k.id) && c.field === k.field && c.chemical === k.chemical)!;
    expect(kept.length).toBeGreaterThan(0);
    // what the tubes cannot tell (o2, made by b07 and b09 but moved in by nobody) is not among the coefficients at all
    // (docs/model.md §13): kept with its reason; the rest of the kept list was barely informed
    const unaffected = u.update.unaffected as { owner: string; id: string; field: string; chemical: string | null; reason: string }[];
    expect(unaffected.map((c) => `${c.id}.${c.field}${c.chemical ? `@${c.chemical}` : ''}`).sort()).toEqual(['o2.diffusivity', 'ptj-1um-b07.rate@o2', 'ptj-1um-b09.rate@o2']);
    for (const k of kept) {
      const un = unaffected.find((c) => c.owner === k.type && c.id === k.key && c.field === k.field && c.chemical === k.chemical);
      if (un) {
        expect(find(k)).toBeUndefined();
        expect((k as { reason?: string }).reason).toContain(un.reason);
        continue;
      }
      const c = find(k);
      expect(c.posteriorSd).toBeGreaterThanOrEqual(0.9 * c.sd);
      expect(Math.abs(c.posteriorMean - c.value)).toBeLessThanOrEqual(0.25 * c.sd);
    }
    for (const r of revs) for (const ch of r.changes) {
      const c = find({ type: r.type, key: r.key, field: ch.field, chemical: ch.chemical });
      expect(c.posteriorSd < 0.9 * c.sd || Math.abs(c.posteriorMean - c.value) > 0.25 * c.sd).toBe(true);
    }
    const sp = (await app.inject({ method: 'GET', url: `/api/species/${candidate}` })).json();
    expect(JSON.stringify(sp)).toMatch(new RegExp(`model update from plan ${planId}.*outcome set 1 revision 1`));
    // applied once: the same job again finds the shelf moved on (its own revisions) and writes nothing (found in review)
    const again = await app.inject({ method: 'POST', url: `/api/plans/${planId}/update/apply`, payload: { job: job.id } });
    expect(again.statusCode).toBe(409);
    expect(again.json().error).toBe('stale-revision');
    expect(again.json().message).toMatch(/changed since .*nothing was written/);
    expect((await app.inject({ method: 'GET', url: `/api/species/${candidate}` })).json().revision).toBe(sp.revision);
    // the same job cannot be applied twice against moved-on outcomes
    sets.get(planId)!.revision = 2;
    const stale = await app.inject({ method: 'POST', url: `/api/plans/${planId}/update/apply`, payload: { job: job.id } });
    expect(stale.statusCode).toBeGreaterThanOrEqual(400);
    expect(stale.body).toMatch(/changed since the update/);
    const n = await app.inject({ method: 'POST', url: `/api/plans/${planId}/next`, payload: { tubes: 5, simulations: 60 } });
    expect(n.statusCode).toBe(202);
    const nj = await waitJob(app, n.json().id);
    expect(nj.state, JSON.stringify(nj.error)).toBe('done');
    expect(nj.result.design.designed.doses).toHaveLength(5);
    expect(nj.result.design.criterion).toBe('expected posterior variance of log10 threshold');
    expect(nj.result.sheet.doses).toHaveLength(5);
    const next = await waitJob(app, nj.result.nextPlanJob);
    expect(next.state).toBe('done');
    expect(next.result.planId).not.toBe(planId);
  }, 120_000);

  it('refuses to apply over a shelf edit made after the plan: the new measurement is not overwritten (found in review)', async () => {
    const r = await app.inject({ method: 'POST', url: `/api/plans/${planId}/update`, payload: {} });
    const job = await waitJob(app, r.json().id);
    expect(job.state).toBe('done');
    // the plan's candidate is edited after the update was computed (here: still at the previous test's applied revision, so
    // a rerun plan would be needed); any base item works the same way
    const before = (await app.inject({ method: 'GET', url: `/api/species/${candidate}` })).json();
    const applied = await app.inject({ method: 'POST', url: `/api/plans/${planId}/update/apply`, payload: { job: job.id } });
    expect(applied.statusCode).toBe(409);
    expect(applied.json().current.some((m: { id: string }) => m.id === candidate)).toBe(true);
    expect((await app.inject({ method: 'GET', url: `/api/species/${candidate}` })).json().revision).toBe(before.revision);
  }, 120_000);

  it('flags reversed outcomes and refuses to apply them', async () => {
    const set = sets.get(planId)!;
    sets.set(planId, { ...set, id: 2, revision: 1, tubes: set.tubes.map((t) => ({ ...t, state: t.state === 'stable' ? 'stationary' : 'stable' })) });
    const r = await app.inject({ method: 'POST', url: `/api/plans/${planId}/update`, payload: {} });
    const job = await waitJob(app, r.json().id);
    expect(job.result.update.consistency.consistent).toBe(false);
    expect(job.result.update.consistency.message).toMatch(/the model or the shelf is wrong/);
    const applied = await app.inject({ method: 'POST', url: `/api/plans/${planId}/update/apply`, payload: { job: job.id } });
    expect(applied.statusCode).toBeGreaterThanOrEqual(400);
    sets.set(planId, set);
  }, 120_000);

  it('answers 4xx when there are no outcomes', async () => {
    const r = await app.inject({ method: 'POST', url: `/api/plans/${planId + 100}/update`, payload: {} });
    expect(r.statusCode).toBeGreaterThanOrEqual(400);
    expect(r.statusCode).toBeLessThan(500);
  });

  it('a lowest dose at or above the cap is a 400 naming minDose (found in review: it named a key "unit")', async () => {
    const r = await app.inject({ method: 'POST', url: `/api/plans/${planId}/next`, payload: { minDose: 5, maxDose: 1 } });
    expect(r.statusCode).toBe(400);
    expect(r.json().problems).toEqual([{ path: 'minDose', message: 'must be below maxDose' }]);
  });
});
