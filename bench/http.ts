/**
 * `npm run bench:http`: a bounded load on the service, on 127.0.0.1 only, in
 * this process. Fires a fixed number of requests per endpoint at a fixed
 * concurrency, prints throughput and latency percentiles, and stops.
 */
import { buildApp } from '../server/http/app.js';
import { seedDemoShelf } from '../server/shelf/seed.js';
import { openDatabase } from '../server/store/db.js';

const REQUESTS = 400;
const CONCURRENCY = 16;

const db = openDatabase(':memory:');
seedDemoShelf(db);
const app = await buildApp({ config: { closeDatabase: true, rateLimit: false }, db });
await app.listen({ port: 0, host: '127.0.0.1' });
const addr = app.server.address();
const base = `http://127.0.0.1:${typeof addr === 'object' && addr ? addr.port : 0}`;

const analyzeBody = JSON.stringify({
  species: [{ id: 'ptj-1um-b07', volumeFraction: '0.1 percent' }],
  chemicals: { h2o2: '200 mM' },
  chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' },
});
const cases: { name: string; init: () => [string, RequestInit] }[] = [
  { name: 'GET  /api/species', init: () => [`${base}/api/species?limit=50`, {}] },
  { name: 'GET  /api/species/:id', init: () => [`${base}/api/species/ptj-1um-b07`, {}] },
  { name: 'POST /api/analyze', init: () => [`${base}/api/analyze`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: analyzeBody }] },
];

for (const c of cases) {
  const times: number[] = [];
  let next = 0;
  let failed = 0;
  const t0 = performance.now();
  await Promise.all(
    Array.from({ length: CONCURRENCY }, async () => {
      while (next < REQUESTS) {
        next++;
        const [url, init] = c.init();
        const s = performance.now();
        const r = await fetch(url, init);
        await r.arrayBuffer();
        if (!r.ok) failed++;
        times.push(performance.now() - s);
      }
    }),
  );
  const total = (performance.now() - t0) / 1000;
  times.sort((a, b) => a - b);
  const q = (p: number) => times[Math.min(times.length - 1, Math.floor(p * times.length))]!.toFixed(2);
  console.log(`${c.name.padEnd(24)} ${(REQUESTS / total).toFixed(0).padStart(6)} req/s   p50 ${q(0.5)} ms   p95 ${q(0.95)} ms   p99 ${q(0.99)} ms   failed ${failed}`);
}
const mem = process.memoryUsage();
console.log(`resident memory ${(mem.rss / 2 ** 20).toFixed(1)} MiB`);
await app.close();
