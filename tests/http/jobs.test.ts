/**
 * Plans run as jobs in the worker pool: 202 with the job, progress (fractions rise, stages
 * named), server-sent events, cancellation (terminated, nothing stored), the time limit,
 * errors raised inside runPlan reaching job.error, and the service answering while a job
 * runs. Order and state are asserted, never timings.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildApp, type App, type AppConfig } from '../../server/http/app.js';
import { checkWorkBudget } from '../../server/jobs/budget.js';
import { seedDemoShelf } from '../../server/shelf/seed.js';
import { InputError } from '../../server/shelf/errors.js';
import { openDatabase } from '../../server/store/db.js';
import { planRequest, postPlan } from '../helpers/plans.js';

async function demoApp(config: AppConfig = {}) {
  const db = openDatabase(':memory:');
  seedDemoShelf(db);
  return buildApp({ config: { closeDatabase: true, ...config }, db });
}

/** A plan that computes for a long while (every demo candidate, 2000 draws, the largest state map): it is cancelled, never awaited. */
const longPlan = { ...planRequest, name: 'long', candidates: 'all', uncertainty: { samples: 2000, seed: 3 }, stateMap: { baseSteps: 80, doseSteps: 80 } };

type JobBody = { id: string; state: string; progress: { fraction: number; stage: string }; startedAt: string | null; result: { planId: number } | null; error: Record<string, unknown> | null };

async function job(app: App, id: string): Promise<JobBody> {
  return (await app.inject({ method: 'GET', url: `/api/jobs/${id}` })).json();
}

/** Poll until the job is in one of the states (no time is asserted: the loop only gives up after two minutes). */
async function until(app: App, id: string, states: string[]): Promise<JobBody> {
  for (let i = 0; i < 12_000; i++) {
    const j = await job(app, id);
    if (states.includes(j.state)) return j;
    await new Promise((r) => setTimeout(r, 10));
  }
  throw new Error(`job ${id} never reached ${states.join(' or ')}`);
}

/** Parse a text/event-stream body into its events. */
function events(body: string): { event: string; data: JobBody }[] {
  return body
    .split('\n\n')
    .filter((b) => b.trim() !== '' && !b.startsWith(':'))
    .map((block) => {
      const lines = block.split('\n');
      const event = lines.find((l) => l.startsWith('event: '))!.slice(7);
      const data = JSON.parse(lines.find((l) => l.startsWith('data: '))!.slice(6)) as JobBody;
      return { event, data };
    });
}

describe('plans as jobs', () => {
  let app: App;
  beforeAll(async () => {
    // every progress call is posted (no throttle), so the stages can be counted
    app = await demoApp({ progressIntervalMs: 0, workers: 2 });
  });
  afterAll(async () => {
    await app.close();
  });

  it('POST /api/plans answers 202 with the job and its location; the job ends done with the stored plan', async () => {
    const r = await app.inject({ method: 'POST', url: '/api/plans', payload: planRequest });
    expect(r.statusCode).toBe(202);
    const j = r.json();
    expect(r.headers.location).toBe(`/api/jobs/${j.id}`);
    expect(j).toMatchObject({ kind: 'plan', label: planRequest.name, result: null, error: null, finishedAt: null, timeLimit: 600 });
    expect(['queued', 'running']).toContain(j.state);
    const done = await until(app, j.id, ['done', 'failed', 'cancelled', 'timed-out']);
    expect(done.state).toBe('done');
    expect(done.progress).toEqual({ fraction: 1, stage: 'done' });
    const plan = (await app.inject({ method: 'GET', url: `/api/plans/${done.result!.planId}` })).json();
    expect(plan.request).toEqual(planRequest);
    expect(plan.result.candidates.map((c: { species: string }) => c.species).sort()).toEqual([...planRequest.candidates].sort());
    const list = (await app.inject({ method: 'GET', url: '/api/jobs' })).json();
    expect(list.items.map((x: { id: string }) => x.id)).toContain(j.id);
    expect((await app.inject({ method: 'GET', url: '/api/jobs/no-such-job' })).statusCode).toBe(404);
  });

  it('progress over server-sent events: every candidate named in order, fractions never falling, then the end', async () => {
    const req = { ...planRequest, candidates: 'all', uncertainty: { samples: 4, seed: 2 }, stateMap: { baseSteps: 4, doseSteps: 5 } };
    const r = await app.inject({ method: 'POST', url: '/api/plans', payload: req });
    expect(r.statusCode).toBe(202);
    const stream = await app.inject({ method: 'GET', url: `/api/jobs/${r.json().id}/events` });
    expect(stream.statusCode).toBe(200);
    expect(stream.headers['content-type']).toMatch(/^text\/event-stream/);
    const ev = events(stream.body);
    expect(ev.at(-1)!.event).toBe('end');
    expect(ev.at(-1)!.data.state).toBe('done');
    expect(ev.slice(0, -1).every((e) => e.event === 'progress')).toBe(true);
    const fractions = ev.map((e) => e.data.progress.fraction);
    fractions.forEach((f, i) => i > 0 && expect(f).toBeGreaterThanOrEqual(fractions[i - 1]!));
    const stages = ev.map((e) => e.data.progress.stage);
    // the demo shelf has 7 active species besides the base: the screen names each, 1 to 7, in order
    // (a stage may repeat with the Monte Carlo draw it is at)
    const named = stages.filter((s) => /^candidate \d+ of 7: /.test(s)).map((s) => Number(/^candidate (\d+)/.exec(s)![1]));
    expect([...new Set(named)]).toEqual([1, 2, 3, 4, 5, 6, 7]);
    named.forEach((k, i) => i > 0 && expect(k).toBeGreaterThanOrEqual(named[i - 1]!));
    expect(stages.indexOf('started')).toBeLessThan(stages.findIndex((s) => s.startsWith('candidate 1 of 7')));
    expect(stages).toContain('ranking the candidates');
    expect(stages.some((s) => s.startsWith('state map of '))).toBe(true);
    expect(stages).toContain('plan computed');
    // the fractions rise within the screen (candidate k of 7 starts at (k − 1)/7 of the screen's share)
    const during = ev.filter((e) => /^candidate \d+ of 7/.test(e.data.progress.stage)).map((e) => e.data.progress.fraction);
    expect(during[0]).toBe(0);
    expect(during.at(-1)!).toBeGreaterThan(during[0]!);
    expect(during.at(-1)!).toBeLessThan(1);
    // an ended job's stream is its end at once
    const again = events((await app.inject({ method: 'GET', url: `/api/jobs/${r.json().id}/events` })).body);
    expect(again.map((e) => e.event)).toEqual(['end']);
  });

  it('the service answers while a job runs (health, the shelf), and a cancelled job is terminated and stores nothing', async () => {
    const plansBefore = (await app.inject({ method: 'GET', url: '/api/plans' })).json().total;
    const r = await app.inject({ method: 'POST', url: '/api/plans', payload: longPlan });
    expect(r.statusCode).toBe(202);
    const id = r.json().id;
    await until(app, id, ['running']);
    const health = await app.inject({ method: 'GET', url: '/api/health' });
    expect(health.statusCode).toBe(200);
    const species = await app.inject({ method: 'GET', url: '/api/species' });
    expect(species.statusCode).toBe(200);
    expect(species.json().items.length).toBeGreaterThan(0);
    // both answered while the job was still computing
    expect((await job(app, id)).state).toBe('running');
    expect(app.pool.stats.busy).toBe(1);
    const del = await app.inject({ method: 'DELETE', url: `/api/jobs/${id}` });
    expect(del.statusCode).toBe(200);
    expect(del.json()).toMatchObject({ id, state: 'cancelled', result: null });
    expect(del.json().finishedAt).not.toBeNull();
    // the worker computing it was terminated: none is busy
    expect(app.pool.stats.busy).toBe(0);
    expect((await job(app, id)).state).toBe('cancelled');
    // cancelling again leaves it as it is
    expect((await app.inject({ method: 'DELETE', url: `/api/jobs/${id}` })).json().state).toBe('cancelled');
    // the pool starts a fresh worker for the next plan, which is stored
    const next = await postPlan(app, { ...planRequest, uncertainty: undefined });
    expect(next.statusCode).toBe(201);
    expect((await app.inject({ method: 'GET', url: '/api/plans' })).json().total).toBe(plansBefore + 1);
  });

  it('with two workers one stays free of jobs: a second job waits, and an analysis is answered meanwhile', async () => {
    const a = (await app.inject({ method: 'POST', url: '/api/plans', payload: longPlan })).json();
    const b = (await app.inject({ method: 'POST', url: '/api/plans', payload: longPlan })).json();
    await until(app, a.id, ['running']);
    expect((await job(app, b.id)).state).toBe('queued');
    const r = await app.inject({ method: 'POST', url: '/api/analyze', payload: { species: planRequest.base, chemicals: planRequest.chemicals, chamber: planRequest.chamber } });
    expect(r.statusCode).toBe(200);
    expect(r.json().state).toBe('stable');
    expect((await job(app, a.id)).state).toBe('running');
    expect((await job(app, b.id)).state).toBe('queued');
    // cancelling the first lets the second start
    await app.inject({ method: 'DELETE', url: `/api/jobs/${a.id}` });
    expect((await until(app, b.id, ['running'])).state).toBe('running');
    expect((await app.inject({ method: 'DELETE', url: `/api/jobs/${b.id}` })).json().state).toBe('cancelled');
  });

  it('a queued job is cancelled before it starts', async () => {
    const one = await demoApp({ workers: 1 });
    try {
      const a = (await one.inject({ method: 'POST', url: '/api/plans', payload: longPlan })).json();
      const b = (await one.inject({ method: 'POST', url: '/api/plans', payload: longPlan })).json();
      await until(one, a.id, ['running']);
      expect((await job(one, b.id)).state).toBe('queued');
      const del = (await one.inject({ method: 'DELETE', url: `/api/jobs/${b.id}` })).json();
      expect(del).toMatchObject({ state: 'cancelled', startedAt: null });
      expect((await job(one, a.id)).state).toBe('running');
      expect(one.pool.stats).toMatchObject({ busy: 1, queued: 0 });
      expect((await one.inject({ method: 'DELETE', url: `/api/jobs/${a.id}` })).json().state).toBe('cancelled');
      expect((await one.inject({ method: 'GET', url: '/api/plans' })).json().total).toBe(0);
    } finally {
      await one.close();
    }
  });

  it("a plan's timeLimit ends the job as timed-out, with nothing stored", async () => {
    const plansBefore = (await app.inject({ method: 'GET', url: '/api/plans' })).json().total;
    const r = await postPlan(app, { ...longPlan, timeLimit: '20 ms' });
    expect(r.job.state).toBe('timed-out');
    expect(r.job.timeLimit).toBeCloseTo(0.02, 12);
    expect(r.job.error).toMatchObject({ error: 'timed-out' });
    expect(r.job.error.message).toMatch(/time limit of 0\.02 s/);
    expect((await app.inject({ method: 'GET', url: '/api/plans' })).json().total).toBe(plansBefore);
    // a bad time limit is a 400 before any job
    const bad = await app.inject({ method: 'POST', url: '/api/plans', payload: { ...planRequest, timeLimit: '3 mM' } });
    expect(bad.statusCode).toBe(400);
    expect(bad.json().problems[0].path).toBe('timeLimit');
  });

  it("the service's own time limit caps a plan's (a longer timeLimit does not lift it)", async () => {
    const short = await demoApp({ jobTimeLimit: 0.02 });
    try {
      const r = await postPlan(short, { ...longPlan, timeLimit: '1 h' });
      expect(r.job).toMatchObject({ state: 'timed-out', timeLimit: 0.02 });
    } finally {
      await short.close();
    }
  });

  it('an error raised inside runPlan (in the worker) reaches job.error as the error handler would send it', async () => {
    const r = await app.inject({ method: 'POST', url: '/api/plans', payload: { ...planRequest, stateMap: { candidate: 'silica-1um-t01' } } });
    // the request itself is valid: the job starts, and the planner refuses the map's candidate
    expect(r.statusCode).toBe(202);
    const j = await until(app, r.json().id, ['done', 'failed', 'cancelled', 'timed-out']);
    expect(j.state).toBe('failed');
    expect(j.error).toEqual({
      statusCode: 400,
      error: 'invalid-input',
      message: 'stateMap.candidate: "silica-1um-t01" is not one of the candidates',
      problems: [{ path: 'stateMap.candidate', message: '"silica-1um-t01" is not one of the candidates' }],
    });
    // postPlan answers with it
    const p = await postPlan(app, { ...planRequest, stateMap: { candidate: 'silica-1um-t01' } });
    expect(p.statusCode).toBe(400);
    expect(p.json().problems[0].path).toBe('stateMap.candidate');
  });

  it('a rerun is a job too: 202, and the new plan points back', async () => {
    const first = await postPlan(app, { ...planRequest, uncertainty: undefined });
    const r = await app.inject({ method: 'POST', url: `/api/plans/${first.json().id}/rerun`, payload: {} });
    expect(r.statusCode).toBe(202);
    expect(r.headers.location).toBe(`/api/jobs/${r.json().id}`);
    const j = await until(app, r.json().id, ['done', 'failed', 'cancelled', 'timed-out']);
    expect(j.state).toBe('done');
    expect((await app.inject({ method: 'GET', url: `/api/plans/${j.result!.planId}` })).json().rerunOf).toBe(first.json().id);
    expect((await app.inject({ method: 'POST', url: '/api/plans/9999/rerun', payload: {} })).statusCode).toBe(404);
  });

  it('validation and unknown ids answer 400 before any job starts', async () => {
    const before = (await app.inject({ method: 'GET', url: '/api/jobs' })).json().total;
    expect((await app.inject({ method: 'POST', url: '/api/plans', payload: { ...planRequest, boundary: 'sideways' } })).statusCode).toBe(400);
    const ghost = await app.inject({ method: 'POST', url: '/api/plans', payload: { ...planRequest, candidates: ['ghost'] } });
    expect(ghost.statusCode).toBe(400);
    expect(ghost.json().problems).toEqual([{ path: 'candidates[0]', message: 'no species "ghost" on the shelf' }]);
    expect((await app.inject({ method: 'GET', url: '/api/jobs' })).json().total).toBe(before);
  });
});

describe('the registry is bounded', () => {
  it('when every place holds a live job a new one is refused with 429; an ended job makes room', async () => {
    const small = await demoApp({ maxJobs: 1, workers: 1 });
    try {
      const a = (await small.inject({ method: 'POST', url: '/api/plans', payload: longPlan })).json();
      const refused = await small.inject({ method: 'POST', url: '/api/plans', payload: planRequest });
      expect(refused.statusCode).toBe(429);
      expect(refused.json()).toMatchObject({ code: 'too-many-jobs' });
      expect((await small.inject({ method: 'DELETE', url: `/api/jobs/${a.id}` })).json().state).toBe('cancelled');
      const next = await postPlan(small, { ...planRequest, uncertainty: undefined });
      expect(next.statusCode).toBe(201);
      // the cancelled job made room and is gone; the new one is listed
      const list = (await small.inject({ method: 'GET', url: '/api/jobs' })).json();
      expect(list.items.map((j: { id: string }) => j.id)).toEqual([next.job.id]);
    } finally {
      await small.close();
    }
  });
});

describe('engine work a request waits for runs in the pool, within a time limit', () => {
  it('POST /api/analyze past the request time limit answers 422 time-limit', async () => {
    const a = await demoApp({ requestTimeLimit: 0 });
    try {
      const r = await a.inject({ method: 'POST', url: '/api/analyze', payload: { species: planRequest.base, chemicals: planRequest.chemicals, chamber: planRequest.chamber } });
      expect(r.statusCode).toBe(422);
      expect(r.json()).toMatchObject({ error: 'domain', code: 'time-limit' });
    } finally {
      await a.close();
    }
  });
});

describe('the work budget', () => {
  it('without draws the 400 is on candidates and says how many fit (arithmetic of candidates × (1 + draws) × modes)', () => {
    let err: unknown;
    try {
      checkWorkBudget({ candidates: 30, samples: 0, modes: 10 }, 200);
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(InputError);
    const [p] = (err as InputError).problems;
    expect(p!.path).toBe('candidates');
    // 30 × 1 × 10 = 300 > 200; 20 candidates × 1 × 10 = 200 fit
    expect(p!.message).toContain('3.000e+2 units of work (30 candidates × (1 + 0 Monte Carlo draws) × 10 modes');
    expect(p!.message).toContain('at most 20 candidates with these draws');
    expect(() => checkWorkBudget({ candidates: 20, samples: 0, modes: 10 }, 200)).not.toThrow();
    // a fuel sweep's levels are dose searches too: 2 × (1 + 4 + 5) × 10 = 200 fits, one more level does not
    expect(() => checkWorkBudget({ candidates: 2, samples: 4, sweepLevels: 5, modes: 10 }, 200)).not.toThrow();
    expect(() => checkWorkBudget({ candidates: 2, samples: 4, sweepLevels: 6, modes: 10 }, 200)).toThrow(/fewer fuel-sweep levels/);
  });
});
