/**
 * Long work runs as a job on the service (202 + /api/jobs/:id). `followJob` polls it (polling, not
 * EventSource, so an access token goes with every request) and reports progress; `jobView` is the
 * progress bar with its Cancel button, which deletes the job.
 */
import { api } from './api.js';
import { h } from './dom.js';

export interface Job<R = unknown> {
  id: string;
  kind: string;
  label: string;
  state: 'queued' | 'running' | 'done' | 'failed' | 'cancelled' | 'timed-out';
  progress: { fraction: number; stage: string };
  result: R | null;
  error: { statusCode: number; error: string; message: string } | null;
}

const ENDED = new Set(['done', 'failed', 'cancelled', 'timed-out']);

export async function followJob<R>(job: Job<R>, onProgress: (j: Job<R>) => void, intervalMs = 250): Promise<Job<R>> {
  let j = job;
  onProgress(j);
  while (!ENDED.has(j.state)) {
    await new Promise((r) => setTimeout(r, intervalMs));
    j = await api<Job<R>>(`/api/jobs/${encodeURIComponent(j.id)}`);
    onProgress(j);
  }
  return j;
}

/** What an ended job means, in words. */
export function jobOutcome(j: Job): string {
  switch (j.state) {
    case 'done':
      return 'done';
    case 'cancelled':
      return 'cancelled: nothing was stored';
    case 'timed-out':
      return `stopped at its time limit: ${j.error?.message ?? 'nothing was stored'}`;
    case 'failed':
      return `failed: ${j.error?.message ?? 'no reason given'}`;
    default:
      return j.state;
  }
}

/** A progress bar (a real <progress>, labelled) and a Cancel button for one job. */
export function jobView(label: string): { el: HTMLElement; update(j: Job): void; onCancel(f: () => void): void } {
  const bar = h('progress', { max: 1, value: 0, 'aria-label': `${label}: progress` });
  const stage = h('span', { class: 'stage' }, 'queued');
  const cancel = h('button', { type: 'button', class: 'secondary' }, 'Cancel');
  const el = h('div', { class: 'job', role: 'group', 'aria-label': label }, h('strong', null, label), bar, stage, cancel);
  let jobId: string | null = null;
  let after: (() => void) | null = null;
  cancel.addEventListener('click', async () => {
    if (!jobId) return;
    cancel.disabled = true;
    stage.textContent = 'cancelling…';
    try {
      await api(`/api/jobs/${encodeURIComponent(jobId)}`, { method: 'DELETE' });
    } catch (e) {
      // the job goes on: say why it could not be stopped
      cancel.disabled = false;
      stage.textContent = `could not cancel: ${e instanceof Error ? e.message : String(e)}`;
      return;
    }
    after?.();
  });
  return {
    el,
    update(j) {
      jobId = j.id;
      bar.value = j.progress.fraction;
      const pct = `${Math.round(j.progress.fraction * 100)} %`;
      stage.textContent = ENDED.has(j.state) ? jobOutcome(j) : `${pct} — ${j.progress.stage || j.state}`;
      if (ENDED.has(j.state)) cancel.hidden = true;
    },
    onCancel(f) {
      after = f;
    },
  };
}
