/**
 * `npm run bench:engine`: how long one analysis takes, for the examples and for
 * random mixtures of growing size, and the general eigen solver on dense
 * matrices; human-readable figures (`npm run bench` prints the JSON lines of
 * the issue-11 workloads). Prints figures; asserts nothing.
 */
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { analyze } from '../server/engine/analyze.js';
import { eigenvalues } from '../server/engine/linalg/eigen.js';
import { Random } from '../server/engine/random.js';
import type { Mixture, Walls } from '../server/engine/types.js';
import { parseMixture } from '../server/schema/mixture.js';

function time(fn: () => void, minMs = 300): { perCallMs: number; calls: number } {
  fn();
  let calls = 0;
  const t0 = performance.now();
  let t = t0;
  while (t - t0 < minMs) {
    fn();
    calls++;
    t = performance.now();
  }
  return { perCallMs: (t - t0) / calls, calls };
}

const root = new URL('../', import.meta.url).pathname;
const dir = join(root, 'seeds/examples');
console.log('analysis of the example files');
for (const f of readdirSync(dir).filter((x) => x.endsWith('.json'))) {
  const mix = parseMixture(JSON.parse(readFileSync(join(dir, f), 'utf8')));
  const r = analyze(mix);
  const { perCallMs, calls } = time(() => analyze(mix));
  console.log(`  ${f.padEnd(36)} ${perCallMs.toFixed(3).padStart(8)} ms/analysis  (${r.scan.evaluations} spectra, ${calls} runs)`);
}

function random(rng: Random, M: number, S: number, walls: Walls): Mixture {
  const chemicals = Array.from({ length: S }, (_, s) => ({ id: `c${s}`, diffusivity: 1e-9, lossRate: rng.uniform() < 0.5 ? 0 : 1e-3, concentration: 50, solubility: null }));
  const species = Array.from({ length: M }, (_, m) => ({
    id: `s${m}`,
    diffusivity: 10 ** rng.between(-13, -11),
    radius: 1e-6,
    density: 10 ** rng.between(13, 15),
    materialDensity: null,
    couplings: chemicals.map((c) => ({ chemical: c.id, activity: { kind: 'constant' as const, rate: (rng.uniform() < 0.5 ? -1 : 1) * 1e-16 }, mobility: (rng.uniform() < 0.5 ? -1 : 1) * 2e-11 })),
  }));
  return { chemicals, species, chamber: { walls, length: 2e-3, depth: null }, crowding: false, conditions: { temperature: 298.15, solventDensity: 997.05, duration: null, fieldOfView: null } };
}

console.log('\nanalysis of random mixtures (median of 20 mixtures)');
for (const walls of ['sealed', 'unbounded'] as Walls[]) {
  for (const [M, S] of [[2, 1], [6, 1], [6, 2], [12, 3], [24, 3]] as const) {
    const rng = new Random(M * 100 + S);
    const times: number[] = [];
    for (let i = 0; i < 20; i++) {
      const mix = random(rng, M, S, walls);
      times.push(time(() => analyze(mix), 20).perCallMs);
    }
    times.sort((a, b) => a - b);
    console.log(`  ${walls.padEnd(9)} M=${String(M).padStart(2)} S=${S}  ${times[10]!.toFixed(3).padStart(8)} ms/analysis`);
  }
}

console.log('\neigenvalues of dense random matrices');
for (const n of [2, 3, 4, 5, 6, 7, 8, 12, 24, 48]) {
  const rng = new Random(n);
  const a = Float64Array.from({ length: n * n }, () => rng.normal());
  const { perCallMs } = time(() => eigenvalues(a, n));
  console.log(`  n=${String(n).padStart(2)}  ${(perCallMs * 1000).toFixed(2).padStart(9)} µs`);
}
const mem = process.memoryUsage();
console.log(`\nresident memory ${(mem.rss / 2 ** 20).toFixed(1)} MiB, heap used ${(mem.heapUsed / 2 ** 20).toFixed(1)} MiB`);
