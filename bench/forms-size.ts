/**
 * `npm run bench:forms`: how large the result of the What forms job is (POST
 * /api/plans/:id/candidates/:species/simulate), as JSON bytes, over the demo
 * shelf's plan (tests/helpers/plans.ts: washed B09 with B07, its bench-sheet
 * series). Prints bytes per case and how many numbers the frames hold; with
 * `--quick` only the small cases. Runs in this process on an in-memory database.
 */
import { gzipSync } from 'node:zlib';
import { buildApp } from '../server/http/app.js';
import { seedDemoShelf } from '../server/shelf/seed.js';
import { openDatabase } from '../server/store/db.js';
import { planRequest, postPlan } from '../tests/helpers/plans.js';

const quick = process.argv.includes('--quick');
const db = openDatabase(':memory:');
seedDemoShelf(db);
const app = await buildApp({ config: { closeDatabase: true, rateLimit: false }, db });
const plan = await postPlan(app, planRequest);
if (plan.statusCode !== 201) throw new Error(`the plan failed: ${plan.body}`);
const planId = (plan.json() as { id: number }).id;

const ENDED = new Set(['done', 'failed', 'cancelled', 'timed-out']);
async function run(body: Record<string, unknown>) {
  const r = await app.inject({ method: 'POST', url: `/api/plans/${planId}/candidates/ptj-1um-b07/simulate`, payload: body });
  if (r.statusCode !== 202) throw new Error(`${r.statusCode}: ${r.body}`);
  let job = r.json();
  while (!ENDED.has(job.state)) {
    await new Promise((res) => setTimeout(res, 50));
    job = (await app.inject({ method: 'GET', url: `/api/jobs/${job.id}` })).json();
  }
  if (job.state !== 'done') throw new Error(`job ${job.state}: ${JSON.stringify(job.error)}`);
  return job.result;
}

const cases: Record<string, unknown>[] = [
  { dims: 1, points: 128 },
  { dims: 1, points: 512 },
  { dims: 2, points: 32, growthTimes: 1 },
  ...(quick ? [] : [{ dims: 2, points: 64, growthTimes: 1 }]),
];
/** the numbers under the frames' deviation (the pictures; not the axes) */
const count = (x: unknown): number => (Array.isArray(x) ? x.reduce((a: number, y) => a + count(y), 0) : typeof x === 'number' ? 1 : x && typeof x === 'object' ? Object.values(x).reduce((a: number, y) => a + count(y), 0) : 0);
console.log('case                                     doses  numbers in frames      JSON bytes    gzip bytes   seconds');
for (const c of cases) {
  const t0 = performance.now();
  const result = await run(c);
  const s = (performance.now() - t0) / 1000;
  const json = JSON.stringify(result);
  const numbers = result.doses.reduce((a: number, d: { kymograph: { deviation: unknown } | null; frames: { deviation: unknown } | null }) => a + count(d.kymograph?.deviation) + count(d.frames?.deviation), 0);
  console.log(
    `${JSON.stringify(c).padEnd(40)} ${String(result.doses.length).padStart(5)} ${numbers.toLocaleString('en').padStart(18)} ${json.length.toLocaleString('en').padStart(15)} ${gzipSync(json).length.toLocaleString('en').padStart(13)} ${s.toFixed(1).padStart(9)}`,
  );
}
await app.close();
