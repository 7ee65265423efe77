/**
 * The service under load for `npm run bench` ("service" workload), in its own
 * process so that the load generator's work is not counted in the service's
 * event loop: a temporary database seeded with the demo shelf and the bench
 * shelf (bench/inputs.ts), `buildApp` listening on 127.0.0.1 on a free port,
 * from dist/ when it is up to date (else from the sources).
 * It measures its own main event loop's delay (perf_hooks.monitorEventLoopDelay)
 * and its resident set (sampled every 20 ms, worker threads included: they
 * share the process) and reports them over IPC:
 *
 *   parent → { type: 'reset' }    start a measurement window (clears both); child → { type: 'reset' }
 *   parent → { type: 'report' }   child → { type: 'report', ... } for the window
 *   child  → { type: 'listening', url, from: 'dist' | 'sources' }
 *
 * It exits when the parent disconnects. Run only by bench/run.ts.
 */
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { monitorEventLoopDelay } from 'node:perf_hooks';
import { fileURLToPath, pathToFileURL } from 'node:url';

// The service as `npm start` runs it: the compiled dist/ when it is up to date (as bin/brink.js decides), so its
// worker threads load dist/server/jobs/worker.js; else the TypeScript sources (workers then go through tsx).
const root = dirname(dirname(fileURLToPath(import.meta.url)));
function newest(dir: string): number {
  let t = -Infinity;
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const p = join(dir, e.name);
    if (e.isDirectory()) t = Math.max(t, newest(p));
    else if (e.name.endsWith('.ts')) t = Math.max(t, statSync(p).mtimeMs);
  }
  return t;
}
const compiled = join(root, 'dist/server/cli.js');
const fromDist = existsSync(compiled) && statSync(compiled).mtimeMs >= newest(join(root, 'server'));
const from = (m: string) => pathToFileURL(join(root, fromDist ? 'dist/server' : 'server', `${m}.${fromDist ? 'js' : 'ts'}`)).href;
const { buildApp } = (await import(from('http/app'))) as typeof import('../server/http/app.js');
const { seedDemoShelf } = (await import(from('shelf/seed'))) as typeof import('../server/shelf/seed.js');
const { openDatabase } = (await import(from('store/db'))) as typeof import('../server/store/db.js');
const { shelfService } = (await import(from('shelf/service'))) as typeof import('../server/shelf/service.js');
const { shelfRepository } = (await import(from('store/shelf'))) as typeof import('../server/store/shelf.js');

if (!process.send) throw new Error('bench/service.ts is started by bench/run.ts (it needs an IPC channel)');
const send = (m: unknown) => process.send!(m);

const dir = mkdtempSync(join(tmpdir(), 'brink-bench-'));
const db = openDatabase(join(dir, 'bench.sqlite'));
seedDemoShelf(db);
// the bench shelf document (bench/inputs.ts), written to a file by bench/run.ts: the engine sources are not loaded here
const shelfFile = process.argv[2];
if (!shelfFile) throw new Error('usage: bench/service.ts <bench-shelf.json>');
shelfService(shelfRepository(db)).importShelf(JSON.parse(readFileSync(shelfFile, 'utf8')), { author: 'benchmark', note: 'invented benchmark shelf' });
const app = await buildApp({ config: { closeDatabase: true, rateLimit: false }, db });
await app.listen({ port: 0, host: '127.0.0.1' });
const addr = app.server.address();

const delay = monitorEventLoopDelay({ resolution: 10 });
delay.enable();
let rssPeak = 0;
const sample = () => (rssPeak = Math.max(rssPeak, process.memoryUsage.rss()));
const sampler = setInterval(sample, 20);
sampler.unref();

const ms = (ns: number) => ns / 1e6;
process.on('message', (m: { type: string }) => {
  if (m.type === 'reset') {
    delay.reset();
    rssPeak = 0;
    sample();
    send({ type: 'reset' });
  } else if (m.type === 'report') {
    sample();
    send({
      type: 'report',
      eventLoopDelay: { p50_ms: ms(delay.percentile(50)), p99_ms: ms(delay.percentile(99)), max_ms: ms(delay.max), mean_ms: ms(delay.mean) },
      rssPeakMiB: rssPeak / 2 ** 20,
      maxRssMiB: process.resourceUsage().maxRSS / 1024,
    });
  }
});
process.on('disconnect', () => {
  void app.close().finally(() => {
    rmSync(dir, { recursive: true, force: true });
    process.exit(0);
  });
});
send({ type: 'listening', url: `http://127.0.0.1:${typeof addr === 'object' && addr ? addr.port : 0}`, from: fromDist ? 'dist' : 'sources' });
