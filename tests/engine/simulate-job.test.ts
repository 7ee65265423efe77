/**
 * The `simulate` task kind in the worker pool (server/jobs/tasks.ts): it reports
 * progress as the simulated fraction of the duration, returns the same summary as
 * the direct call (the run is deterministic for a seed), and a cancelled run ends
 * with WorkCancelledError (the pool's signal terminates the worker).
 */
import { readFileSync } from 'node:fs';
import { afterEach, describe, expect, it } from 'vitest';
import { WorkCancelledError, WorkerPool } from '../../server/jobs/pool.js';
import { simulate } from '../../server/engine/simulate/index.js';
import { parseMixture } from '../../server/schema/mixture.js';

let pool: WorkerPool | null = null;
afterEach(async () => {
  await pool?.close();
  pool = null;
});

const mixture = () => parseMixture(JSON.parse(readFileSync('seeds/examples/oscillatory-travelling-bands.json', 'utf8')));

describe('simulate as a job', () => {
  it('reports progress and returns the direct call’s summary', async () => {
    pool = new WorkerPool({ size: 1 });
    const fractions: number[] = [];
    const options = { dims: 1 as const, points: 128, duration: 3600, frames: 11 };
    const out = await pool.run('simulate', { mixture: mixture(), options }, { onProgress: (f) => fractions.push(f) });
    expect(fractions.length).toBeGreaterThan(0);
    expect(fractions[fractions.length - 1]).toBe(1);
    const direct = simulate(mixture(), options);
    expect(out.summary).toEqual(direct.summary);
    expect(out.frames.data).toHaveLength(11);
    expect(out.frames.data[0]).toBeInstanceOf(Float32Array);
  });

  it('is cancelled by the signal', async () => {
    pool = new WorkerPool({ size: 1 });
    const ac = new AbortController();
    const run = pool.run('simulate', { mixture: mixture(), options: { dims: 2, points: 128, duration: 1e6 } }, { signal: ac.signal, onProgress: () => ac.abort() });
    await expect(run).rejects.toBeInstanceOf(WorkCancelledError);
  });
});
