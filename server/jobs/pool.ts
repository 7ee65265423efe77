/**
 * A pool of worker threads for engine work, so that a request handler never
 * computes for more than a moment: `pool.run(kind, input, options)` posts the
 * task (server/jobs/tasks.ts) to an idle worker, or queues it, and resolves
 * with the worker's answer.
 *
 * - Cancellation (`signal`) and the time limit (`timeLimitMs`, counted from the
 *   moment a worker takes the task) terminate the worker that runs it — the
 *   engine is synchronous, so there is no gentler way to stop it — and the
 *   pool starts a fresh one for the next task. A queued task is just dropped.
 * - An error thrown by the task comes back as the same class (InputError,
 *   EngineInputError, EngineDomainError, DomainError; anything else an Error
 *   with the worker's stack), so the one error handler answers as it would have.
 * - Workers start when work arrives, up to `size`, and stay for the next task;
 *   an idle worker does not keep the process alive. `close()` terminates all.
 * - Two lanes: `job` tasks (plans) may occupy at most `jobWorkers` workers at
 *   once (default size − 1, at least 1), so with two or more workers a request
 *   that waits for its answer (an analysis, a fit) always finds one free of
 *   long jobs; `request` tasks (the default) may use any worker.
 *
 * The worker file sits next to this module: `worker.js` when this module is
 * compiled JavaScript, else `worker-tsx.mjs`, which registers the tsx loader
 * and imports `worker.ts` (tests, `npm run dev`, the CLI from source).
 */
import { availableParallelism } from 'node:os';
import { Worker } from 'node:worker_threads';
import { EngineDomainError, EngineInputError } from '../engine/types.js';
import { DomainError, InputError } from '../shelf/errors.js';
import type { TaskInput, TaskKind, TaskOutput } from './tasks.js';
import type { FromWorker, SerializedError, ToWorker, WorkerData } from './worker.js';

/** The task was cancelled (its signal aborted) before it ended. */
export class WorkCancelledError extends Error {
  override readonly name = 'WorkCancelledError';
  constructor() {
    super('cancelled');
  }
}

/** The task ran past its time limit and was stopped. */
export class WorkTimedOutError extends Error {
  override readonly name = 'WorkTimedOutError';
  constructor(readonly limitMs: number) {
    super(`stopped after its time limit of ${limitMs / 1000} s`);
  }
}

export interface RunOptions {
  /** Abort to cancel: a queued task is dropped, a running one's worker terminated (rejects with WorkCancelledError). */
  signal?: AbortSignal;
  /** Longest the task may compute, ms, from the moment a worker takes it (rejects with WorkTimedOutError). */
  timeLimitMs?: number;
  /** A worker has taken the task. */
  onStart?: () => void;
  /** The task's progress, as the worker posts it (at most about ten a second, and the end). */
  onProgress?: (fraction: number, stage: string) => void;
  /** `job` for long work started by a request that does not wait (at most `jobWorkers` at once); default `request` */
  lane?: 'job' | 'request';
}

interface Task {
  id: number;
  kind: TaskKind;
  input: unknown;
  options: RunOptions;
  resolve: (v: unknown) => void;
  reject: (e: Error) => void;
  slot: Slot | null;
  timer: NodeJS.Timeout | null;
  onAbort: (() => void) | null;
}

interface Slot {
  worker: Worker;
  task: Task | null;
}

/** Default pool size: the machine's available parallelism, at least 1. */
export function defaultPoolSize(): number {
  return Math.max(1, availableParallelism());
}

/** The URL and options of a new worker: compiled JavaScript loads worker.js, TypeScript source goes through tsx. */
function workerFile(): { url: URL; entry: string | null } {
  const here = import.meta.url;
  if (/\.[cm]?js$/.test(new URL(here).pathname)) return { url: new URL('./worker.js', here), entry: null };
  return { url: new URL('./worker-tsx.mjs', here), entry: new URL('./worker.ts', here).href };
}

export interface PoolOptions {
  /** worker threads (default: the available parallelism, at least 1) */
  size?: number;
  /** smallest interval between two progress messages of a task, ms (default 100: about ten a second) */
  progressIntervalMs?: number;
  /** workers `job` tasks may occupy at once (default size − 1, at least 1) */
  jobWorkers?: number;
  /** niceness of the worker threads (Linux; default 10, 0 to keep the main thread's): the HTTP thread gets the CPU first */
  nice?: number;
}

/** Rebuild an error thrown in a worker as the class the error handler knows. */
export function rebuildError(e: SerializedError): Error {
  let err: Error;
  if (e.name === 'InputError' && Array.isArray(e.problems)) err = new InputError(e.problems, typeof e.more === 'number' ? e.more : 0);
  else if (e.name === 'EngineInputError') err = new EngineInputError(e.path ?? '', e.reason ?? e.message);
  else if (e.name === 'EngineDomainError') err = new EngineDomainError(e.code ?? 'domain', e.message);
  else if (e.name === 'DomainError') err = new DomainError(e.code ?? 'domain', e.message);
  else {
    err = new Error(e.message);
    err.name = e.name;
  }
  if (e.stack) err.stack = e.stack;
  return err;
}

export class WorkerPool {
  readonly size: number;
  readonly jobWorkers: number;
  private readonly slots: Slot[] = [];
  private readonly queue: Task[] = [];
  private nextId = 1;
  private closed = false;
  private readonly file = workerFile();
  private readonly progressIntervalMs: number;
  private readonly nice: number;

  constructor(o: PoolOptions = {}) {
    const size = o.size ?? defaultPoolSize();
    if (!(Number.isInteger(size) && size >= 1)) throw new Error(`pool size must be a whole number ≥ 1, got ${size}`);
    this.size = size;
    this.jobWorkers = Math.min(size, Math.max(1, o.jobWorkers ?? size - 1));
    this.progressIntervalMs = Math.max(0, o.progressIntervalMs ?? 100);
    this.nice = Math.min(19, Math.max(0, Math.round(o.nice ?? 10)));
  }

  /** How many workers exist, how many are computing, and how many tasks wait. */
  get stats(): { size: number; workers: number; busy: number; queued: number } {
    return { size: this.size, workers: this.slots.length, busy: this.slots.filter((s) => s.task !== null).length, queued: this.queue.length };
  }

  /** Run one task in a worker; resolves with its answer. */
  run<K extends TaskKind>(kind: K, input: TaskInput<K>, options: RunOptions = {}): Promise<TaskOutput<K>> {
    return new Promise<TaskOutput<K>>((resolve, reject) => {
      if (this.closed) return reject(new Error('the worker pool is closed'));
      if (options.signal?.aborted) return reject(new WorkCancelledError());
      const task: Task = { id: this.nextId++, kind, input, options, resolve: resolve as (v: unknown) => void, reject, slot: null, timer: null, onAbort: null };
      if (options.signal) {
        task.onAbort = () => this.stop(task, new WorkCancelledError());
        options.signal.addEventListener('abort', task.onAbort, { once: true });
      }
      this.queue.push(task);
      this.pump();
    });
  }

  /** Terminate every worker; queued and running tasks reject. */
  async close(): Promise<void> {
    this.closed = true;
    for (const t of this.queue.splice(0)) this.settle(t, new Error('the worker pool closed'));
    const slots = this.slots.splice(0);
    for (const s of slots) if (s.task) this.settle(s.task, new Error('the worker pool closed'));
    await Promise.all(slots.map((s) => s.worker.terminate()));
  }

  private pump(): void {
    while (this.queue.length > 0 && !this.closed) {
      // the first queued task its lane lets run: a job waits while jobWorkers workers hold jobs
      const jobsBusy = this.slots.filter((s) => s.task?.options.lane === 'job').length;
      const next = this.queue.findIndex((t) => t.options.lane !== 'job' || jobsBusy < this.jobWorkers);
      if (next < 0) return;
      let slot = this.slots.find((s) => s.task === null);
      if (!slot) {
        if (this.slots.length >= this.size) return;
        slot = this.spawn();
      }
      const task = this.queue.splice(next, 1)[0]!;
      slot.task = task;
      task.slot = slot;
      slot.worker.ref();
      if (task.options.timeLimitMs !== undefined) {
        const ms = Math.max(0, task.options.timeLimitMs);
        task.timer = setTimeout(() => this.stop(task, new WorkTimedOutError(ms)), ms);
      }
      task.options.onStart?.();
      const msg: ToWorker = { id: task.id, kind: task.kind, input: task.input };
      slot.worker.postMessage(msg);
    }
  }

  private spawn(): Slot {
    const workerData: WorkerData = { progressIntervalMs: this.progressIntervalMs, nice: this.nice, ...(this.file.entry ? { entry: this.file.entry } : {}) };
    const worker = new Worker(this.file.url, { workerData });
    const slot: Slot = { worker, task: null };
    worker.unref();
    worker.on('message', (m: FromWorker) => {
      const t = slot.task;
      if (!t || m.id !== t.id) return;
      if (m.type === 'progress') t.options.onProgress?.(m.fraction, m.stage);
      else if (m.type === 'done') this.finish(slot, t, m.output);
      else this.finish(slot, t, undefined, rebuildError(m.error));
    });
    const lost = (why: string) => {
      const i = this.slots.indexOf(slot);
      if (i < 0) return; // terminated by the pool
      this.slots.splice(i, 1);
      if (slot.task) this.settle(slot.task, new Error(`the worker stopped: ${why}`));
      slot.task = null;
      this.pump();
    };
    worker.on('error', (e) => lost(e.message));
    worker.on('exit', (code) => lost(`exit code ${code}`));
    this.slots.push(slot);
    return slot;
  }

  private finish(slot: Slot, task: Task, output: unknown, error?: Error): void {
    slot.task = null;
    slot.worker.unref();
    if (error) this.settle(task, error);
    else this.settle(task, null, output);
    this.pump();
  }

  /** Cancel or time out a task: drop it from the queue, or terminate the worker computing it. */
  private stop(task: Task, why: Error): void {
    const q = this.queue.indexOf(task);
    if (q >= 0) {
      this.queue.splice(q, 1);
      this.settle(task, why);
      return;
    }
    const slot = task.slot;
    if (!slot || slot.task !== task) return; // already ended
    const i = this.slots.indexOf(slot);
    if (i >= 0) this.slots.splice(i, 1);
    slot.task = null;
    void slot.worker.terminate();
    this.settle(task, why);
    this.pump();
  }

  private settle(task: Task, error: Error | null, output?: unknown): void {
    if (task.timer) clearTimeout(task.timer);
    task.timer = null;
    if (task.onAbort) task.options.signal?.removeEventListener('abort', task.onAbort);
    task.onAbort = null;
    if (error) task.reject(error);
    else task.resolve(output);
  }
}
