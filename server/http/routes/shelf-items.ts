/**
 * Routes for one kind of shelf item (chemicals or species), registered twice:
 *
 *   POST   {path}                         create            { record, author?, note? }
 *   GET    {path}?q=&kind=&includeRetired=&limit=&offset=   list current revisions
 *   GET    {path}/:id                     current revision
 *   PUT    {path}/:id                     edit              { baseRevision, record, author?, note? }
 *   POST   {path}/:id/retire | /restore   status change     { baseRevision?, author?, note? }
 *   GET    {path}/:id/revisions           history, oldest first
 *   GET    {path}/:id/revisions/:revision one revision
 */
import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { chemicalRecordSchema, keySchema, speciesRecordSchema, toTypedRecord, type ShelfType } from '../../schema/shelf.js';
import type { Revision } from '../../store/shelf.js';
import { authorship } from '../access.js';

const meta = { author: z.string().min(1).max(200).optional(), note: z.string().max(2000).optional() };

/** A revision as the API shows it: stored values (SI, as typed, provenance) and the typed record ready to edit. */
export function present(r: Revision) {
  return { ...r, typed: toTypedRecord(r.record) };
}

export const shelfItemRoutes: FastifyPluginAsync<{ type: ShelfType; path: string }> = async (base, { type, path }) => {
  const app = base.withTypeProvider<ZodTypeProvider>();
  const record = type === 'chemical' ? chemicalRecordSchema : speciesRecordSchema;
  const noun = type === 'chemical' ? 'chemical' : 'species';
  const tags = ['shelf'];
  const params = z.object({ id: keySchema });

  app.post(path, {
    schema: { tags, summary: `Add a ${noun} to the shelf (revision 1)`, body: z.strictObject({ record, ...meta }) },
    handler: async (req, reply) => {
      const rev = app.shelf.create(type, req.body.record, authorship(req, req.body));
      reply.code(201).header('location', `${path}/${rev.id}`);
      return present(rev);
    },
  });

  app.get(path, {
    schema: {
      tags,
      summary: `List ${noun} (current revisions), searched by id or name`,
      querystring: z.strictObject({
        q: z.string().max(200).optional(),
        kind: z.enum(['colloid', 'enzyme', 'other']).optional(),
        includeRetired: z.enum(['true', 'false']).default('false'),
        limit: z.coerce.number().int().min(1).max(500).default(50),
        offset: z.coerce.number().int().min(0).default(0),
      }),
    },
    handler: async (req) => {
      const { q, kind, includeRetired, limit, offset } = req.query;
      const page = app.shelf.repo.list(type, { q, kind, includeRetired: includeRetired === 'true', limit, offset });
      return { items: page.items.map(present), total: page.total, limit, offset };
    },
  });

  app.get(`${path}/:id`, {
    schema: { tags, summary: `The current revision of a ${noun}`, params },
    handler: async (req) => present(app.shelf.repo.mustGet(type, req.params.id)),
  });

  app.put(`${path}/:id`, {
    schema: {
      tags,
      summary: `Edit a ${noun}: a new revision, refused with 409 if baseRevision is not the current one`,
      params,
      body: z.strictObject({ baseRevision: z.number().int().min(1), record, ...meta }),
    },
    handler: async (req) => present(app.shelf.edit(type, req.params.id, req.body.baseRevision, req.body.record, authorship(req, req.body))),
  });

  for (const [action, retired] of [
    ['retire', true],
    ['restore', false],
  ] as const) {
    app.post(`${path}/:id/${action}`, {
      schema: {
        tags,
        summary: retired ? `Retire a ${noun}: hidden from lists, still readable, never deleted` : `Restore a retired ${noun}`,
        params,
        body: z.strictObject({ baseRevision: z.number().int().min(1).optional(), ...meta }).nullish(),
      },
      handler: async (req) => {
        const b = req.body ?? {};
        return present(app.shelf.repo.setRetired(type, req.params.id, retired, b.baseRevision ?? null, authorship(req, b)));
      },
    });
  }

  app.get(`${path}/:id/revisions`, {
    schema: { tags, summary: `Every revision of a ${noun}, oldest first`, params },
    handler: async (req) => ({ id: req.params.id, revisions: app.shelf.repo.history(type, req.params.id).map(present) }),
  });

  app.get(`${path}/:id/revisions/:revision`, {
    schema: { tags, summary: `One revision of a ${noun}`, params: z.object({ id: keySchema, revision: z.coerce.number().int().min(1) }) },
    handler: async (req) => present(app.shelf.repo.at(type, req.params.id, req.params.revision)),
  });
};
