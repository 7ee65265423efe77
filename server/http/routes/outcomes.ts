/**
 * Outcomes of a plan's bench sheet and the empirical threshold (server/protocol/outcomes.ts):
 *
 *   POST /api/plans/:id/outcomes                    record what each tube did: a new revision for the plan and candidate (201)
 *        JSON { sheet?: <sheet options>, tubes: [{ tube, state, onsetTime?, patternLength?, notes? }], author?, note?, baseRevision? },
 *        a filled-in sheet's JSON (observations; its request holds its options), or CSV (content type text/csv:
 *        tube, state, onset [min], length [um], notes) with the sheet options, author, note, baseRevision in the query
 *   GET  /api/plans/:id/outcomes?candidate=         the current set (of the candidate, or the latest written) and every revision
 *   GET  /api/plans/:id/outcomes/dose-response?candidate=&revision=&link=logit|probit|cloglog&scale=log10|linear
 *                                                   the quantal fit of the tubes on the dose path: crossed the plan's boundary or not
 *
 * A write names the revision it was based on (baseRevision, 0 for the first; none needed for the first): a stale
 * one is 409. Unknown tube codes, duplicates, bad states, negative times are 400 naming the row and field.
 */
import type { FastifyPluginAsync } from 'fastify';
import { authorship } from '../access.js';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { QUANTAL_LINKS, type QuantalLink } from '../../engine/fit/quantal.js';
import { readCsvEntry, readJsonEntry, type QueryMeta } from '../../protocol/outcomes.js';
import { splitDoses } from '../../protocol/sheet.js';

const params = z.object({ id: z.coerce.number().int().min(1) });
const entryQuery = z.strictObject({
  candidate: z.string().max(64).optional(),
  sampleVolume: z.string().max(100).optional(),
  replicates: z.coerce.number().int().optional(),
  minVolume: z.string().max(100).optional(),
  overage: z.coerce.number().optional(),
  buffer: z.string().max(100).optional(),
  doses: z.string().max(2000).optional().describe('comma-separated dopant doses, as for the sheet'),
  operator: z.string().max(200).optional(),
  tubeVolume: z.string().max(100).optional(),
  chamberVolume: z.string().max(100).optional(),
  closedChamber: z.enum(['true', 'false']).optional(),
  author: z.string().min(1).max(200).optional(),
  note: z.string().max(2000).optional(),
  baseRevision: z.coerce.number().int().min(0).optional(),
});

export const outcomeRoutes: FastifyPluginAsync = async (base) => {
  const app = base.withTypeProvider<ZodTypeProvider>();
  const tags = ['outcomes'];
  // CSV bodies for this plugin only (fastify scopes a content-type parser to the plugin that adds it)
  app.addContentTypeParser(['text/csv', 'text/plain'], { parseAs: 'string', bodyLimit: 5 * 1024 * 1024 }, (_req, body, done) => done(null, body));

  app.post('/api/plans/:id/outcomes', {
    schema: {
      tags,
      summary: "Record what each tube of a plan's bench sheet did: a new immutable revision for the plan and candidate",
      description:
        'JSON { sheet?, tubes: [{ tube, state: stable|stationary|oscillatory|unclear, onsetTime?: "12 min" | seconds, patternLength?: "0.4 mm" | metres, notes? }], author?, note?, baseRevision? }; or the filled-in sheet JSON (observations); or CSV (text/csv) with columns tube, state, onset [min], length [um], notes and the sheet options in the query. The sheet is rebuilt from the plan to check each tube code and record its delivered dose; tubes left without a state are listed in `unobserved`.',
      params,
      querystring: entryQuery,
      body: z.unknown(),
    },
    handler: async (req, reply) => {
      const { author, note, baseRevision, doses, closedChamber, ...opts } = req.query;
      const sheet: Record<string, unknown> = Object.fromEntries(Object.entries(opts).filter(([, v]) => v !== undefined));
      if (doses !== undefined) sheet.doses = splitDoses(doses);
      if (closedChamber !== undefined) sheet.closedChamber = closedChamber === 'true';
      const q: QueryMeta = { ...(Object.keys(sheet).length > 0 ? { sheet } : {}), ...(author !== undefined ? { author } : {}), ...(note !== undefined ? { note } : {}), ...(baseRevision !== undefined ? { baseRevision } : {}) };
      const read = typeof req.body === 'string' ? readCsvEntry(req.body, q) : readJsonEntry(req.body, q);
      // with a bearer token its holder is the author; an author given in the entry becomes part of the note
      const by = authorship(req, { author: read.author, note: read.note });
      const { author: _given, note: _note, ...rest } = read;
      const entry = { ...rest, ...(by.author !== undefined ? { author: by.author } : {}), ...(by.note !== null ? { note: by.note } : {}) };
      const set = app.outcomes.record(req.params.id, entry);
      reply.code(201).header('location', `/api/plans/${req.params.id}/outcomes?candidate=${encodeURIComponent(set.candidate)}`);
      return set;
    },
  });

  app.get('/api/plans/:id/outcomes', {
    schema: { tags, summary: "A plan's outcomes: the current set (of a candidate, or the latest written) and every revision", params, querystring: z.strictObject({ candidate: z.string().max(64).optional() }) },
    handler: async (req) => app.outcomes.list(req.params.id, req.query.candidate),
  });

  app.get('/api/plans/:id/outcomes/dose-response', {
    schema: {
      tags,
      summary: 'The empirical threshold: a quantal dose–response fit (maximum likelihood) of the tubes on the dose path, crossed the plan’s boundary or not',
      params,
      querystring: z.strictObject({
        candidate: z.string().max(64).optional(),
        revision: z.coerce.number().int().min(1).optional(),
        link: z.enum(QUANTAL_LINKS as [QuantalLink, ...QuantalLink[]]).default('logit'),
        scale: z.enum(['log10', 'linear']).default('log10'),
      }),
    },
    handler: async (req) => app.outcomes.doseResponse(req.params.id, req.query),
  });
};
