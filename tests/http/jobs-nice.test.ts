/**
 * The pool's worker threads run at a lower scheduling priority than the thread that answers requests (Linux: each
 * thread has its own nice value, field 19 of /proc/<pid>/task/<tid>/stat, proc(5)), so long work yields the CPU.
 */
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { WorkerPool } from '../../server/jobs/pool.js';
import { parseMixture } from '../../server/schema/mixture.js';

/** nice value of every thread of this process, from /proc (after the ") " that ends the command name: field 19 is index 16) */
const threadNices = () =>
  readdirSync('/proc/self/task').map((tid) => Number(readFileSync(join('/proc/self/task', tid, 'stat'), 'utf8').split(') ')[1]!.split(' ')[16]));

const mixture = parseMixture(JSON.parse(readFileSync(new URL('../../seeds/examples/stable-janus-dispersed.json', import.meta.url), 'utf8')));
let pool: WorkerPool | null = null;
afterEach(async () => {
  await pool?.close();
  pool = null;
});

describe.runIf(process.platform === 'linux')('worker priority', () => {
  it('a worker that has run a task is a thread at nice 10, the calling thread stays at its own', async () => {
    const mine = threadNices();
    expect(mine.filter((n) => n === 10).length).toBe(0);
    pool = new WorkerPool({ size: 1 });
    await pool.run('analyze', { mixture });
    const after = threadNices();
    expect(after.filter((n) => n === 10).length).toBeGreaterThan(0);
    const own = Number(readFileSync('/proc/thread-self/stat', 'utf8').split(') ')[1]!.split(' ')[16]);
    expect(own).toBe(0);
  });
  it('nice: 0 keeps the workers at the caller’s priority', async () => {
    pool = new WorkerPool({ size: 1, nice: 0 });
    await pool.run('analyze', { mixture });
    expect(threadNices().filter((n) => n === 10).length).toBe(0);
  });
});
