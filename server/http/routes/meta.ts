/** Health and the mixture JSON Schema (the pages are served by routes/pages.ts). */
import type { FastifyPluginAsync } from 'fastify';
import { mixtureJsonSchema } from '../../schema/json-schema.js';
import { schemaVersion } from '../../store/db.js';
import { VERSION } from '../../version.js';

export const metaRoutes: FastifyPluginAsync = async (app) => {
  app.get('/api/health', { schema: { tags: ['meta'], summary: 'Liveness, version and database schema version' } }, async () => ({
    ok: true,
    version: VERSION,
    schemaVersion: schemaVersion(app.db),
    chemicals: app.shelf.repo.count('chemical'),
    species: app.shelf.repo.count('species'),
  }));
  app.get('/api/schema/mixture', { schema: { tags: ['meta'], summary: 'JSON Schema of the mixture file' } }, async () => mixtureJsonSchema());
};
