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
      summary: 'Import a shelf document: all or nothing; every bad entry is reported by its path; an entry that would undo a newer edit is refused (409) unless overwrite=true',
      description:
        'Each entry of an export carries `revision`, the revision it was exported at. If an item has a newer revision here and the entry differs from it, importing would undo that edit: the answer is 409 import-conflict listing every such entry (`conflicts`: path, type, id, exportedRevision, currentRevision) and nothing is written. `overwrite=true` imports them anyway (as new revisions whose note names the one replaced; history keeps both). Entries without `revision` (exports of format version 1, hand-written files) conflict whenever their item exists and differs. Identical entries are left alone; new ids are created. The answer counts created, revised, unchanged and overwritten (revised over a newer edit).',
      querystring: z.strictObject({ author: z.string().min(1).max(200).optional(), overwrite: z.enum(['true', 'false']).default('false') }),
      body: z.unknown(),
    },
    handler: async (req) => {
      const by = authorship(req, { author: req.query.author, note: 'shelf import' });
      return app.shelf.importShelf(req.body, { author: by.author ?? 'import', note: by.note }, { overwrite: req.query.overwrite === 'true' });
    },
  });
};
