/**
 * Issue 13's loop on the demo shelf, through the API with the outcome storage itself (no injected reader):
 * plan → sheet (JSON) → outcomes (a filled-in CSV) → update job → apply → next job → the next plan's sheet,
 * whose default series is the designed doses. Then the contradiction path: outcomes reversed against the
 * plan's prediction are flagged and apply is refused.
 *
 * The bench results are invented: each tube is recorded as the state the plan predicts at its delivered dose
 * (stationary above the plan's nominal threshold, stable below); reversed, they contradict it. The checks are
 * the service's own contracts (the series stored and printed, the provenance, the refusal), not numbers.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildApp } from '../../server/http/app.js';
import { seedDemoShelf } from '../../server/shelf/seed.js';
import { openDatabase } from '../../server/store/db.js';
import { planRequest, postPlan } from '../helpers/plans.js';

type App = Awaited<ReturnType<typeof buildApp>>;
const ENDED = new Set(['done', 'failed', 'cancelled', 'timed-out']);
const candidate = 'ptj-1um-b07';

async function waitJob(app: App, id: string) {
  for (let i = 0; i < 6000; i++) {
    const j = (await app.inject({ method: 'GET', url: `/api/jobs/${id}` })).json();
    if (ENDED.has(j.state)) return j;
    await new Promise((r) => setTimeout(r, 20));
  }
  throw new Error(`job ${id} did not end`);
}

interface SheetTube {
  code: string;
  kind: string;
  tubes: string[];
  doseSi: number | null;
  plannedDose: { value: number; unit: string };
}

/** A filled-in CSV of a sheet's series and no-dopant tubes: stationary above `threshold`, stable below (or reversed). */
function filledCsv(tubes: SheetTube[], threshold: number, reversed = false): string {
  const rows = ['tube,state,onset [min],length [um],notes'];
  for (const t of tubes.filter((x) => x.kind === 'series' || x.kind === 'no-dopant')) {
    const crossed = t.doseSi! > threshold !== reversed;
    for (const lid of t.tubes) rows.push(crossed ? `${lid},stationary,,,clusters` : `${lid},stable,,,`);
  }
  return rows.join('\n') + '\n';
}

describe('the bench loop on the demo shelf, over HTTP', () => {
  let app: App;
  let planId = 0;
  let threshold = 0;
  beforeAll(async () => {
    const db = openDatabase(':memory:');
    seedDemoShelf(db);
    app = await buildApp({ config: { closeDatabase: true, rateLimit: false }, db });
    const plan = await postPlan(app, { ...planRequest, name: 'bench loop (test)', candidates: [candidate], uncertainty: { samples: 60, seed: 3 } });
    expect(plan.statusCode, plan.body).toBe(201);
    planId = plan.json().id;
    threshold = plan.json().result.candidates[0].threshold.density;
  }, 120_000);
  afterAll(async () => app.close());

  it('plan → sheet → CSV outcomes → update → apply → next → the next plan prints its designed series', async () => {
    const sheet = (await app.inject({ method: 'GET', url: `/api/plans/${planId}/sheet?format=json&replicates=2` })).json();
    expect(sheet.prediction.series.from).toBe('default-factors');
    const rec = await app.inject({ method: 'POST', url: `/api/plans/${planId}/outcomes?replicates=2&author=${encodeURIComponent('a technician (invented)')}`, headers: { 'content-type': 'text/csv' }, payload: filledCsv(sheet.tubes, threshold) });
    expect(rec.statusCode, rec.body).toBe(201);
    const set = rec.json();

    const u = await app.inject({ method: 'POST', url: `/api/plans/${planId}/update`, payload: {} });
    expect(u.statusCode, u.body).toBe(202);
    const uj = await waitJob(app, u.json().id);
    expect(uj.state, JSON.stringify(uj.error)).toBe('done');
    expect(uj.result.outcomes).toEqual({ id: set.id, revision: set.revision, candidate });
    expect(uj.result.update.consistency.consistent).toBe(true);
    const band = uj.result.update.bands.find((b: { species: string }) => b.species === candidate);
    // the tubes narrow the band: its 5–95 % ratio after is below the one before
    expect(band.posterior.p95 / band.posterior.p05).toBeLessThan(band.prior.p95 / band.prior.p05);

    const applied = await app.inject({ method: 'POST', url: `/api/plans/${planId}/update/apply`, payload: { job: uj.id, author: 'a student (invented)' } });
    expect(applied.statusCode, applied.body).toBe(201);
    expect(applied.json().revisions.map((r: { key: string }) => r.key)).toContain(candidate);
    const sp = (await app.inject({ method: 'GET', url: `/api/species/${candidate}` })).json();
    expect(sp.record.couplings[0].mobility.provenance.reference).toContain(`model update from plan ${planId} ("bench loop (test)"), outcome set ${set.id} revision ${set.revision}`);

    const n = await app.inject({ method: 'POST', url: `/api/plans/${planId}/next`, payload: { tubes: 5, simulations: 60 } });
    expect(n.statusCode, n.body).toBe(202);
    const nj = await waitJob(app, n.json().id);
    expect(nj.state, JSON.stringify(nj.error)).toBe('done');
    const r = nj.result;
    expect(r.design.designed.doses).toHaveLength(5);
    expect(r.shelf.changedSincePlan).toBe(true);
    expect(r.shelf.note).toMatch(new RegExp(`${candidate} \\(revision 1 → 2\\)`));
    // the job ended with the next plan stored: it points back, and its request carries the designed doses
    const next = (await app.inject({ method: 'GET', url: `/api/plans/${r.nextPlanId}` })).json();
    expect(next.rerunOf).toBe(planId);
    expect(next.request.series.candidate).toBe(candidate);
    expect(next.request.series.doses).toEqual(r.sheet.doses);
    expect(next.request.series.from).toMatchObject({ plan: planId, outcomeSet: set.id, outcomeRevision: set.revision, criterion: 'expected posterior variance of log10 threshold', fixedDoses: r.design.fixed.doses.length });
    // computed on the updated shelf
    const rev = next.revisions.find((x: { role: string; revisionId: number }) => x.role === 'candidate');
    expect(applied.json().revisions.map((x: { revisionId: number }) => x.revisionId)).toContain(rev.revisionId);

    // its sheet prints the designed doses (and dose 0) with no dose option given, and says where they came from
    const s2 = (await app.inject({ method: 'GET', url: `/api/plans/${r.nextPlanId}/sheet?format=json` })).json();
    expect(s2.prediction.series.from).toBe('plan-series');
    expect(s2.prediction.series.note).toMatch(new RegExp(`^designed from the outcomes of plan ${planId} \\(outcome set ${set.id} revision ${set.revision}\\)`));
    expect(s2.prediction.series.note).toMatch(/with the default fixed series of \d+ doses; plus dose 0/);
    const planned = s2.tubes.filter((t: SheetTube) => t.kind === 'series' || t.kind === 'no-dopant').map((t: SheetTube) => t.plannedDose.value);
    expect(planned).toEqual([0, ...r.design.designed.doses.map((x: number) => Number((x * 1e-6).toPrecision(4)))]);
    // a dose option still wins over the plan's series
    const s3 = (await app.inject({ method: 'GET', url: `/api/plans/${r.nextPlanId}/sheet?format=json&doses=${encodeURIComponent('0,1e8 1/mL')}` })).json();
    expect(s3.prediction.series.from).toBe('doses');
    // the markdown says it too
    const md = (await app.inject({ method: 'GET', url: `/api/plans/${r.nextPlanId}/sheet?format=md` })).body;
    expect(md).toContain(`designed from the outcomes of plan ${planId}`);
  }, 180_000);

  it('flags outcomes that contradict the model and refuses to apply them', async () => {
    const sheet = (await app.inject({ method: 'GET', url: `/api/plans/${planId}/sheet?format=json&replicates=2` })).json();
    const list = (await app.inject({ method: 'GET', url: `/api/plans/${planId}/outcomes?candidate=${candidate}` })).json();
    const rec = await app.inject({ method: 'POST', url: `/api/plans/${planId}/outcomes?replicates=2&baseRevision=${list.current.revision}`, headers: { 'content-type': 'text/csv' }, payload: filledCsv(sheet.tubes, threshold, true) });
    expect(rec.statusCode, rec.body).toBe(201);
    const u = await app.inject({ method: 'POST', url: `/api/plans/${planId}/update`, payload: {} });
    const uj = await waitJob(app, u.json().id);
    expect(uj.state).toBe('done');
    expect(uj.result.update.consistency.consistent).toBe(false);
    expect(uj.result.update.consistency.message).toMatch(/the model or the shelf is wrong/);
    const before = (await app.inject({ method: 'GET', url: `/api/species/${candidate}` })).json();
    const applied = await app.inject({ method: 'POST', url: `/api/plans/${planId}/update/apply`, payload: { job: uj.id } });
    expect(applied.statusCode).toBe(422);
    expect(applied.json().message).toMatch(/^the update was not applied/);
    const after = (await app.inject({ method: 'GET', url: `/api/species/${candidate}` })).json();
    expect(after.revision).toBe(before.revision);
    // nor is a next round designed on them
    const plans = (await app.inject({ method: 'GET', url: '/api/plans' })).json().total;
    const n = await app.inject({ method: 'POST', url: `/api/plans/${planId}/next`, payload: { tubes: 4, simulations: 40 } });
    const nj = await waitJob(app, n.json().id);
    expect(nj.state).toBe('failed');
    expect(nj.error.statusCode).toBe(422);
    expect(nj.error.code).toBe('inconsistent-outcomes');
    expect(nj.error.message).toMatch(/^no next plan was made: .*the model or the shelf is wrong/);
    expect((await app.inject({ method: 'GET', url: '/api/plans' })).json().total).toBe(plans);
  }, 180_000);

  it('a plan request with a series is bounded and checked', async () => {
    const bad = await app.inject({ method: 'POST', url: '/api/plans', payload: { ...planRequest, candidates: [candidate], series: { candidate: 'catb-0.22-l04', doses: ['1e8 1/mL'] } } });
    expect(bad.statusCode).toBe(400);
    expect(bad.body).toMatch(/series\.candidate/);
    const many = await app.inject({ method: 'POST', url: '/api/plans', payload: { ...planRequest, candidates: [candidate], series: { candidate, doses: Array.from({ length: 25 }, (_, i) => `${i + 1}e7 1/mL`) } } });
    expect(many.statusCode).toBe(400);
    const ghost = await app.inject({ method: 'POST', url: '/api/plans', payload: { ...planRequest, candidates: [candidate], series: { candidate, doses: ['1e8 1/mL'], from: { plan: 9999, outcomeSet: 1, outcomeRevision: 1, criterion: 'x', expectedBandFactor: { designed: 1.1, fixed: 1.2 }, fixedDoses: 9 } } } });
    expect(ghost.statusCode).toBe(404);
    // a series without a design: the sheet prints it, saying it is the plan's own
    const own = await postPlan(app, { ...planRequest, candidates: [candidate], uncertainty: { samples: 10, seed: 1 }, series: { candidate, doses: ['1e8 1/mL', '2e8 1/mL'] } });
    expect(own.statusCode, own.body).toBe(201);
    const s = (await app.inject({ method: 'GET', url: `/api/plans/${own.json().id}/sheet?format=json` })).json();
    expect(s.prediction.series.from).toBe('plan-series');
    expect(s.prediction.series.note).toMatch(/^the dose series stored with the plan, plus dose 0/);
    expect(s.tubes.filter((t: SheetTube) => t.kind === 'series' || t.kind === 'no-dopant').map((t: SheetTube) => t.plannedDose.value)).toEqual([0, 1e8, 2e8]);
  }, 120_000);
});
