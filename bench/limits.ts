/**
 * `npm run bench:limits`: what the request bounds (server/schema/limits.ts) cost at their edge, with figures:
 * one analysis with crowding of LIMITS.species species and 1–3 (and LIMITS.chemicals) chemicals, and the
 * time to refuse the hostile bodies the bounds exist for (5,000-deep nesting, 200,000 couplings, a
 * 20,000-entry import of bad entries). In this process, on an in-memory database; stops by itself.
 */
import { analyze } from '../server/engine/analyze.js';
import type { Chemical, Mixture, Species } from '../server/engine/types.js';
import { buildApp } from '../server/http/app.js';
import { LIMITS } from '../server/schema/limits.js';
import { seedDemoShelf } from '../server/shelf/seed.js';
import { openDatabase } from '../server/store/db.js';

/** A crowded sample of n species each coupled to every one of k chemicals (invented numbers of lab-like size). */
function crowded(n: number, k: number): Mixture {
  const chemicals: Chemical[] = Array.from({ length: k }, (_, j) => ({ id: `c${j}`, diffusivity: 1e-9, lossRate: 0, concentration: 50, solubility: null }));
  const species: Species[] = Array.from({ length: n }, (_, i) => ({
    id: `s${i}`,
    diffusivity: 2e-13 * (1 + i / n),
    radius: 1e-6,
    density: 1e15 / n,
    materialDensity: null,
    couplings: chemicals.map((c, j) => ({ chemical: c.id, activity: { kind: 'constant' as const, rate: (j % 2 ? 1 : -1) * 1e-18 * (1 + i) }, mobility: 5e-9 * ((i % 3) - 1) })),
  }));
  return { chemicals, species, chamber: { walls: 'sealed', length: 2e-3, depth: null }, crowding: true, conditions: { temperature: 298.15, solventDensity: 997.05, duration: null, fieldOfView: null } };
}

const ms = (t0: number) => `${(performance.now() - t0).toFixed(0)} ms`;
/** The shortest of three runs, ms (after one warm-up analysis: the first pays for compiling the code). */
function best(m: Mixture): number {
  let t = Infinity;
  for (let r = 0; r < 3; r++) {
    const t0 = performance.now();
    analyze(m);
    t = Math.min(t, performance.now() - t0);
  }
  return t;
}
analyze(crowded(8, 2));
console.log(`analysis with crowding, each species coupled to every chemical (shortest of 3 runs); the bound is ${LIMITS.species} species, ${LIMITS.chemicals} chemicals:`);
for (const [n, k] of [[16, 2], [24, 2], [LIMITS.species, 1], [LIMITS.species, 2], [LIMITS.species, 3], [LIMITS.species, LIMITS.chemicals], [64, 2], [100, 2]] as const) {
  const past = n > LIMITS.species ? '   (past the bound, for comparison)' : '';
  console.log(`  ${String(n).padStart(3)} species, ${String(k).padStart(2)} chemicals: ${best(crowded(n, k)).toFixed(0).padStart(6)} ms${past}`);
}

const db = openDatabase(':memory:');
seedDemoShelf(db);
const app = await buildApp({ config: { closeDatabase: true, rateLimit: false, workers: 1 }, db });
const timed = async (label: string, method: 'POST', url: string, payload: string) => {
  const t0 = performance.now();
  const r = await app.inject({ method, url, payload, headers: { 'content-type': 'application/json' } });
  const b = r.json() as { problems?: { path: string }[]; more?: number };
  console.log(`  ${label}: ${r.statusCode} in ${ms(t0)} (${payload.length.toLocaleString('en')} bytes; first problem at "${b.problems?.[0]?.path ?? ''}"${b.more ? `, ${b.problems!.length} shown and ${b.more} more` : ''})`);
};
console.log('refusing hostile bodies (each a 400 naming the field):');
await timed('a body nested 5,000 levels deep', 'POST', '/api/analyze/mixture', '{"a":'.repeat(5000) + '1' + '}'.repeat(5000));
const species = { id: 'big', name: 'big', kind: 'colloid', diffusivity: '0.2 um^2/s', radius: '1 um' };
await timed('a species with 200,000 couplings', 'POST', '/api/species', JSON.stringify({ record: { ...species, couplings: Array(200_000).fill({ chemical: 'h2o2' }) } }));
await timed('an import of 10,000 species with a bad radius each', 'POST', '/api/shelf/import', JSON.stringify({ format: 'brink-shelf', version: 1, species: Array.from({ length: 10_000 }, (_, i) => ({ ...species, id: `b${i}`, radius: '-1 um' })) }));
await app.close();
