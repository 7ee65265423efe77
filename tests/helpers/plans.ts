/** Plan requests over the demo shelf shared by the sheet tests. */

/** Washed B09 base (stays dispersed), B07 with a stationary threshold and the catalase bead, with a band. */
export const planRequest = {
  name: 'washed B09: what makes it cluster?',
  base: [{ id: 'ptj-1um-b09', volumeFraction: '0.1 percent' }],
  chemicals: { h2o2: '200 mM' },
  chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' },
  boundary: 'stationary',
  candidates: ['ptj-1um-b07', 'catb-0.22-l04'],
  uncertainty: { samples: 40, seed: 5 },
};

/** What postPlan answers: the shape of an inject response, for the stored plan (201) or the error the plan ended with. */
export interface PlanAnswer {
  statusCode: number;
  headers: Record<string, unknown>;
  body: string;
  json: () => any; // eslint-disable-line @typescript-eslint/no-explicit-any
  job?: any; // eslint-disable-line @typescript-eslint/no-explicit-any
}

const ENDED = new Set(['done', 'failed', 'cancelled', 'timed-out']);

/**
 * POST a plan request (or a rerun: payload undefined, url /api/plans/:id/rerun) and wait for it: a 202 job is
 * polled at GET /api/jobs/:id until it ends; a finished job answers as the stored plan with 201 and the plan's
 * location (as a synchronous create would), a failed one with the error it carries (job.error: its statusCode
 * and the error handler's body), a cancelled or timed-out one with its error or the state. Anything else (a 400
 * or 404 refused before a job starts) is passed through as it came. `job` is the job as it ended.
 */
export async function postPlan(
  app: { inject: (o: { method: 'GET' | 'POST' | 'DELETE'; url: string; payload?: unknown }) => Promise<{ statusCode: number; headers: Record<string, unknown>; body: string; json: () => any }> }, // eslint-disable-line @typescript-eslint/no-explicit-any
  payload: unknown,
  url = '/api/plans',
): Promise<PlanAnswer> {
  // a rerun has no fields: it sends {} (the service refuses a body-less POST, server/http/access.ts)
  const r = await app.inject({ method: 'POST', url, payload: payload ?? {} });
  if (r.statusCode !== 202) return r;
  let job = r.json();
  for (let i = 0; !ENDED.has(job.state); i++) {
    if (i > 6000) throw new Error(`job ${job.id} did not end within 2 minutes`);
    await new Promise((res) => setTimeout(res, 20));
    const next = await app.inject({ method: 'GET', url: `/api/jobs/${job.id}` });
    if (next.statusCode !== 200) throw new Error(`GET /api/jobs/${job.id} answered ${next.statusCode}: ${next.body}`);
    job = next.json();
  }
  if (job.state === 'done') {
    const plan = await app.inject({ method: 'GET', url: `/api/plans/${job.result.planId}` });
    return { statusCode: plan.statusCode === 200 ? 201 : plan.statusCode, headers: { ...plan.headers, location: `/api/plans/${job.result.planId}` }, body: plan.body, json: () => plan.json(), job };
  }
  const err = job.error ?? { statusCode: 500, error: job.state, message: `job ${job.state}` };
  return { statusCode: err.statusCode ?? 500, headers: {}, body: JSON.stringify(err), json: () => err, job };
}
