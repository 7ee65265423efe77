/** Health, the mixture JSON Schema, and the landing page. */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import type { FastifyPluginAsync } from 'fastify';
import { mixtureJsonSchema } from '../../schema/json-schema.js';
import { schemaVersion } from '../../store/db.js';
import { packagePath, VERSION } from '../../version.js';

/** web/ at the package root (found the same way from server/ and dist/server/). */
const WEB = packagePath('web');

export const metaRoutes: FastifyPluginAsync = async (app) => {
  app.get('/api/health', { schema: { tags: ['meta'], summary: 'Liveness, version and database schema version' } }, async () => ({
    ok: true,
    version: VERSION,
    schemaVersion: schemaVersion(app.db),
    chemicals: app.shelf.repo.count('chemical'),
    species: app.shelf.repo.count('species'),
  }));
  app.get('/api/schema/mixture', { schema: { tags: ['meta'], summary: 'JSON Schema of the mixture file' } }, async () => mixtureJsonSchema());
  // The pages, their scripts and the shared files, read once at start-up.
  const files: [string, string, string][] = [
    ['/', 'index.html', 'text/html; charset=utf-8'],
    ['/planner', 'planner.html', 'text/html; charset=utf-8'],
    ['/calibrate', 'calibrate.html', 'text/html; charset=utf-8'],
    ['/web/style.css', 'style.css', 'text/css; charset=utf-8'],
    ['/web/common.js', 'common.js', 'text/javascript; charset=utf-8'],
    // each page's script is a file (the content security policy allows no inline script)
    ['/web/shelf.js', 'shelf.js', 'text/javascript; charset=utf-8'],
    ['/web/calibrate.js', 'calibrate.js', 'text/javascript; charset=utf-8'],
    ['/web/planner.js', 'planner.js', 'text/javascript; charset=utf-8'],
  ];
  for (const [url, file, type] of files) {
    const body = readFileSync(join(WEB, file), 'utf8');
    app.get(url, { schema: { hide: true } }, async (_req, reply) => reply.type(type).send(body));
  }
};
