/**
 * Jobs (long work started by POST /api/plans and POST /api/plans/:id/rerun):
 *
 *   GET    /api/jobs              jobs held in memory, newest first
 *   GET    /api/jobs/:id          one job: state, progress { fraction, stage }, result or error
 *   GET    /api/jobs/:id/events   server-sent events: `progress` (the job) as it advances, then `end` (the job)
 *   DELETE /api/jobs/:id          cancel: the work is terminated, state `cancelled` (an ended job is left as it is)
 */
import type { FastifyBaseLogger, FastifyPluginAsync, FastifyReply, FastifyRequest } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { ENDED_STATES, type Job, type JobError, type JobEvent } from '../../jobs/registry.js';
import { NotFoundError } from '../../store/shelf.js';
import { errorHandler } from '../errors.js';

const params = z.object({ id: z.string().min(1).max(64) });

/** Seconds between two comment lines on an idle event stream (keeps proxies from closing it). */
const KEEP_ALIVE_MS = 15_000;

/**
 * The body the one error handler (errors.ts) would send for an error, with its status:
 * a failed job carries exactly what a synchronous request would have answered.
 */
export function errorBody(err: Error, log?: FastifyBaseLogger): JobError {
  let statusCode = 500;
  let body: Record<string, unknown> = {};
  const reply = {
    code(s: number) {
      statusCode = s;
      return reply;
    },
    send(b: Record<string, unknown>) {
      body = b;
      return reply;
    },
  };
  const req = { log: log ?? { error: () => {} } };
  errorHandler.call(null, err, req as unknown as FastifyRequest, reply as unknown as FastifyReply);
  return { statusCode, error: String(body.error ?? 'internal'), message: String(body.message ?? ''), ...body };
}

export const jobRoutes: FastifyPluginAsync = async (base) => {
  const app = base.withTypeProvider<ZodTypeProvider>();
  const tags = ['jobs'];
  const find = (id: string): Job => {
    const job = app.jobs.get(id);
    if (!job) throw new NotFoundError(`no job "${id}" (jobs are held in memory for a while after they end)`);
    return job;
  };

  app.get('/api/jobs', {
    schema: { tags, summary: 'Jobs held in memory, newest first (ended ones for a while)' },
    handler: async () => {
      const items = app.jobs.list();
      return { items, total: items.length };
    },
  });
  app.get('/api/jobs/:id', { schema: { tags, summary: 'A job: state, progress, result ({ planId } for a plan) or error', params }, handler: async (req) => find(req.params.id) });
  app.delete('/api/jobs/:id', {
    schema: { tags, summary: 'Cancel a job: its work is terminated and nothing is stored (a job that has ended is returned as it is)', params },
    handler: async (req) => app.jobs.cancel(find(req.params.id).id)!,
  });
  app.get('/api/jobs/:id/events', {
    schema: {
      tags,
      summary: 'Server-sent events of a job: `progress` (the job) at once and as it advances, then `end` (the job) and the stream closes',
      params,
    },
    handler: async (req, reply) => {
      const job = find(req.params.id);
      reply.hijack();
      const res = reply.raw;
      res.writeHead(200, { 'content-type': 'text/event-stream; charset=utf-8', 'cache-control': 'no-cache', connection: 'keep-alive', 'x-accel-buffering': 'no' });
      const send = (e: JobEvent) => res.write(`event: ${e.type}\ndata: ${JSON.stringify(e.job)}\n\n`);
      if (ENDED_STATES.includes(job.state)) {
        send({ type: 'end', job });
        res.end();
        return;
      }
      send({ type: 'progress', job });
      const ping = setInterval(() => res.write(': keep-alive\n\n'), KEEP_ALIVE_MS);
      ping.unref();
      let unsubscribe = () => {};
      const stop = () => {
        clearInterval(ping);
        unsubscribe();
      };
      unsubscribe = app.jobs.subscribe(job.id, (e) => {
        send(e);
        if (e.type === 'end') {
          stop();
          res.end();
        }
      });
      req.raw.on('close', stop);
    },
  });
};
