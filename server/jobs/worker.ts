/**
 * One worker thread of the pool (server/jobs/pool.ts): it takes one task at a
 * time `{ id, kind, input }`, runs the kind's function (loaded once, `LOADERS`
 * in tasks.ts) and posts back progress
 * (at most one per `progressIntervalMs`, default 100 ms, plus every fraction 1), then `done` with
 * the output or `failed` with the error's name, message, stack and fields.
 */
import { readlinkSync } from 'node:fs';
import { setPriority } from 'node:os';
import { parentPort, workerData } from 'node:worker_threads';
import { LOADERS, type TaskKind, type TaskProgress } from './tasks.js';

export interface ToWorker {
  id: number;
  kind: TaskKind;
  input: unknown;
}

/** An error as it crosses the thread: its class name, message, stack and the fields the error handler reads. */
export interface SerializedError {
  name: string;
  message: string;
  stack?: string;
  problems?: { path: string; message: string }[];
  /** problems found but not listed (InputError.more) */
  more?: number;
  path?: string;
  reason?: string;
  code?: string;
}

export type FromWorker =
  | { type: 'progress'; id: number; fraction: number; stage: string }
  | { type: 'done'; id: number; output: unknown }
  | { type: 'failed'; id: number; error: SerializedError };

/** What the pool gives a new worker: the progress interval, and (from TypeScript source) the entry worker-tsx.mjs imports. */
export interface WorkerData {
  progressIntervalMs: number;
  /** niceness of this thread (0–19; default 10): long work yields the CPU to the thread that answers requests */
  nice?: number;
  entry?: string;
}

const interval = (workerData as WorkerData | null)?.progressIntervalMs ?? 100;

/**
 * Lower this thread's scheduling priority, so that on a busy machine the main thread (HTTP) gets the CPU first and
 * the service keeps answering while jobs compute. On Linux a thread has its own id (/proc/thread-self → "pid/task/tid")
 * and setpriority(PRIO_PROCESS, tid) sets that thread's nice value alone; elsewhere this is skipped (returns null).
 */
export function niceThisThread(nice: number): number | null {
  try {
    const tid = Number(readlinkSync('/proc/thread-self').split('/').pop());
    if (!Number.isInteger(tid) || tid <= 0) return null;
    setPriority(tid, nice);
    return tid;
  } catch {
    return null;
  }
}

export function serializeError(e: unknown): SerializedError {
  if (!(e instanceof Error)) return { name: 'Error', message: String(e) };
  const f = e as Error & Partial<SerializedError>;
  const out: SerializedError = { name: f.name, message: f.message };
  if (f.stack) out.stack = f.stack;
  // at most a few hundred problems cross the thread boundary; the rest are counted
  if (Array.isArray(f.problems)) {
    out.problems = f.problems.slice(0, 1000).map((p) => ({ path: String(p.path), message: String(p.message) }));
    const more = (typeof f.more === 'number' ? f.more : 0) + Math.max(0, f.problems.length - 1000);
    if (more > 0) out.more = more;
  }
  if (typeof f.path === 'string') out.path = f.path;
  if (typeof f.reason === 'string') out.reason = f.reason;
  if (typeof f.code === 'string') out.code = f.code;
  return out;
}

const loaded = new Map<TaskKind, (input: unknown, progress: TaskProgress) => unknown>();

async function task(kind: TaskKind) {
  if (!Object.hasOwn(LOADERS, kind)) throw new Error(`unknown task kind "${String(kind)}"`);
  let fn = loaded.get(kind);
  if (!fn) {
    fn = (await LOADERS[kind]()) as (input: unknown, progress: TaskProgress) => unknown;
    loaded.set(kind, fn);
  }
  return fn;
}

const port = parentPort;
if (port) {
  niceThisThread((workerData as WorkerData | null)?.nice ?? 10);
  port.on('message', async (m: ToWorker) => {
    let last = -Infinity;
    const progress = (fraction: number, stage: string) => {
      const now = performance.now();
      if (fraction < 1 && now - last < interval) return;
      last = now;
      const msg: FromWorker = { type: 'progress', id: m.id, fraction, stage };
      port.postMessage(msg);
    };
    let reply: FromWorker;
    try {
      const run = await task(m.kind);
      reply = { type: 'done', id: m.id, output: run(m.input, progress) };
    } catch (e) {
      reply = { type: 'failed', id: m.id, error: serializeError(e) };
    }
    try {
      port.postMessage(reply);
    } catch (e) {
      // an answer that cannot be cloned (a function in it) is an internal error, said as one
      port.postMessage({ type: 'failed', id: m.id, error: serializeError(e) } satisfies FromWorker);
    }
  });
}
