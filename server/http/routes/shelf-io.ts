/** Whole-shelf export and all-or-nothing import. */
import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { authorship } from '../access.js';

export const shelfIoRoutes: FastifyPluginAsync = async (base) => {
  const app = base.withTypeProvider<ZodTypeProvider>();
  app.get('/api/shelf/export', {
    schema: { tags: ['shelf'], summary: 'The whole shelf as one JSON document (current revisions, values as typed, retired items flagged)' },
    handler: async () => app.shelf.exportShelf(),
  });
  app.post('/api/shelf/import', {
    schema: {
      tags: ['shelf'],
      summary: 'Import a shelf document: all or nothing; every bad entry is reported by its path',
      querystring: z.strictObject({ author: z.string().min(1).max(200).optional() }),
      body: z.unknown(),
    },
    handler: async (req) => {
      const by = authorship(req, { author: req.query.author, note: 'shelf import' });
      return app.shelf.importShelf(req.body, { author: by.author ?? 'import', note: by.note });
    },
  });
};
