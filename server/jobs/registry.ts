/**
 * Jobs: long work started by a request and read later (GET /api/jobs/:id, its
 * server-sent events), held in memory only — a restart forgets them; what a job
 * makes (a stored plan) is in the database.
 *
 * A job is `queued` until a worker takes its task, then `running`, and ends
 * `done` (with `result`), `failed` (with `error`: the body the error handler
 * would have sent, and its `statusCode`), `cancelled` or `timed-out`. Its
 * progress `{ fraction, stage }` never falls. The registry holds at most
 * `maxJobs`; ended jobs stay readable for `keepEndedMs`, and the oldest ended
 * ones make room for new ones. When every place holds a job not yet ended, a new
 * one is refused (429 `too-many-jobs`).
 */
import { randomUUID } from 'node:crypto';
import { WorkCancelledError, WorkTimedOutError, type RunOptions } from './pool.js';

export type JobState = 'queued' | 'running' | 'done' | 'failed' | 'cancelled' | 'timed-out';
export const ENDED_STATES: readonly JobState[] = ['done', 'failed', 'cancelled', 'timed-out'];

/** The body a failed job carries: what the error handler would have answered, with its status. */
export interface JobError {
  statusCode: number;
  error: string;
  message: string;
  [field: string]: unknown;
}

export interface Job<R = unknown> {
  id: string;
  kind: string;
  /** what the job is about, for lists (e.g. the plan's name) */
  label: string;
  state: JobState;
  progress: { fraction: number; stage: string };
  createdAt: string;
  startedAt: string | null;
  finishedAt: string | null;
  /** the longest it may compute, s */
  timeLimit: number;
  result: R | null;
  error: JobError | null;
}

/** What a job's work function gets: pass `runOptions` to `pool.run`; `signal` aborts on cancel. */
export interface JobContext {
  signal: AbortSignal;
  runOptions: RunOptions & { signal: AbortSignal; timeLimitMs: number; lane: 'job' };
}

export type JobEvent = { type: 'progress' | 'end'; job: Job };

/** Too many jobs not yet ended to start another (→ HTTP 429). */
export class TooManyJobsError extends Error {
  override readonly name = 'TooManyJobsError';
  readonly statusCode = 429;
  readonly code = 'too-many-jobs';
  constructor(max: number) {
    super(`${max} jobs are queued or running: wait for one to end, or cancel one (DELETE /api/jobs/:id)`);
  }
}

export interface JobRegistryOptions {
  /** jobs held, ended or not (default 200) */
  maxJobs?: number;
  /** how long an ended job stays readable, ms (default one hour) */
  keepEndedMs?: number;
  /** the longest a job may compute unless it asks for less, ms (default 10 min) */
  timeLimitMs?: number;
  /** the body of a failed job from its error (the app passes its error handler's) */
  describeError?: (e: Error) => JobError;
}

interface Entry {
  job: Job;
  abort: AbortController;
  listeners: Set<(e: JobEvent) => void>;
  ended: number | null;
}

const isEnded = (s: JobState) => ENDED_STATES.includes(s);

export class JobRegistry {
  readonly maxJobs: number;
  readonly keepEndedMs: number;
  readonly timeLimitMs: number;
  private readonly describeError: (e: Error) => JobError;
  private readonly entries = new Map<string, Entry>();

  constructor(o: JobRegistryOptions = {}) {
    this.maxJobs = o.maxJobs ?? 200;
    this.keepEndedMs = o.keepEndedMs ?? 3_600_000;
    this.timeLimitMs = o.timeLimitMs ?? 600_000;
    this.describeError = o.describeError ?? ((e) => ({ statusCode: 500, error: 'internal', message: e.message }));
  }

  /**
   * Start a job: `work` runs at once (it should hand its computing to the pool with
   * `ctx.runOptions`) and its answer becomes the job's `result`. `timeLimit` (s) may
   * only shorten the registry's own limit.
   */
  start<R>(kind: string, work: (ctx: JobContext) => Promise<R>, o: { label?: string; timeLimit?: number } = {}): Job<R> {
    this.prune(true);
    if (this.entries.size >= this.maxJobs) throw new TooManyJobsError(this.maxJobs);
    const limitMs = Math.min(this.timeLimitMs, o.timeLimit !== undefined ? o.timeLimit * 1000 : Infinity);
    const job: Job<R> = {
      id: randomUUID(),
      kind,
      label: o.label ?? kind,
      state: 'queued',
      progress: { fraction: 0, stage: 'queued' },
      createdAt: new Date().toISOString(),
      startedAt: null,
      finishedAt: null,
      timeLimit: limitMs / 1000,
      result: null,
      error: null,
    };
    const abort = new AbortController();
    const entry: Entry = { job, abort, listeners: new Set(), ended: null };
    this.entries.set(job.id, entry);
    const ctx: JobContext = {
      signal: abort.signal,
      runOptions: {
        lane: 'job',
        signal: abort.signal,
        timeLimitMs: limitMs,
        onStart: () => {
          if (job.state !== 'queued') return;
          job.state = 'running';
          job.startedAt = new Date().toISOString();
          job.progress = { fraction: job.progress.fraction, stage: 'started' };
          this.emit(entry, 'progress');
        },
        onProgress: (fraction, stage) => {
          if (isEnded(job.state)) return;
          const f = Number.isFinite(fraction) ? Math.min(1, Math.max(0, fraction)) : 0;
          job.progress = { fraction: Math.max(job.progress.fraction, f), stage };
          this.emit(entry, 'progress');
        },
      },
    };
    work(ctx).then(
      (result) => this.end(entry, 'done', { result }),
      (e: unknown) => {
        const err = e instanceof Error ? e : new Error(String(e));
        if (err instanceof WorkCancelledError || abort.signal.aborted) this.end(entry, 'cancelled', {});
        else if (err instanceof WorkTimedOutError) this.end(entry, 'timed-out', { error: { statusCode: 422, error: 'timed-out', message: `the job ${err.message}; ask for less work (fewer candidates or draws) or a longer timeLimit, up to ${this.timeLimitMs / 1000} s` } });
        else this.end(entry, 'failed', { error: this.describeError(err) });
      },
    );
    return job;
  }

  /** A job by id, or undefined. */
  get(id: string): Job | undefined {
    this.prune();
    return this.entries.get(id)?.job;
  }

  /** Every job held, newest first. */
  list(): Job[] {
    this.prune();
    return [...this.entries.values()].map((e) => e.job).reverse();
  }

  /** Cancel a job (terminates its work); a job that has ended is left as it is. Returns the job, or undefined. */
  cancel(id: string): Job | undefined {
    const entry = this.entries.get(id);
    if (!entry) return undefined;
    if (!isEnded(entry.job.state)) {
      this.end(entry, 'cancelled', {});
      entry.abort.abort();
    }
    return entry.job;
  }

  /** Hear a job's progress and its end; returns the unsubscribe function. */
  subscribe(id: string, listener: (e: JobEvent) => void): () => void {
    const entry = this.entries.get(id);
    if (!entry) return () => {};
    entry.listeners.add(listener);
    return () => entry.listeners.delete(listener);
  }

  /** Cancel every job not yet ended (the app is closing). */
  close(): void {
    for (const e of this.entries.values()) if (!isEnded(e.job.state)) this.cancel(e.job.id);
  }

  private end(entry: Entry, state: JobState, o: { result?: unknown; error?: JobError }): void {
    const job = entry.job;
    if (isEnded(job.state)) return;
    job.state = state;
    job.finishedAt = new Date().toISOString();
    if (o.result !== undefined) job.result = o.result;
    if (o.error) job.error = o.error;
    if (state === 'done') job.progress = { fraction: 1, stage: 'done' };
    else job.progress = { fraction: job.progress.fraction, stage: state };
    entry.ended = Date.now();
    this.emit(entry, 'end');
    entry.listeners.clear();
  }

  private emit(entry: Entry, type: JobEvent['type']): void {
    for (const l of entry.listeners) l({ type, job: entry.job });
  }

  /** Drop ended jobs older than keepEndedMs; to make room for a new job, also the oldest ended ones while the registry is full. */
  private prune(makeRoom = false): void {
    const now = Date.now();
    for (const [id, e] of this.entries) if (e.ended !== null && now - e.ended > this.keepEndedMs) this.entries.delete(id);
    if (!makeRoom || this.entries.size < this.maxJobs) return;
    for (const [id, e] of this.entries) {
      if (this.entries.size < this.maxJobs) break;
      if (e.ended !== null) this.entries.delete(id);
    }
  }
}
