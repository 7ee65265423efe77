/**
 * The pages: dist/web/ (built from web/ by Vite, server/web-build.ts), read once when the app is
 * built and served from memory. Each page is one HTML file served at its own URLs; the page reads
 * the id from its path and everything else through the API. Hashed files under /assets/ are cached
 * for a year; the HTML never (a new build is seen at once). Without a build, the page URLs answer
 * 503 saying how to build them (the API works regardless).
 */
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { extname, join } from 'node:path';
import type { FastifyPluginAsync } from 'fastify';
import { WEB_OUT } from '../../web-build.js';

/** Each page's HTML file and the URLs it is served at (fastify route syntax). */
export const PAGE_ROUTES: { file: string; urls: string[] }[] = [
  { file: 'index.html', urls: ['/', '/shelf'] },
  { file: 'item.html', urls: ['/shelf/new', '/shelf/species/:id', '/shelf/chemicals/:id'] },
  { file: 'calibrate.html', urls: ['/calibrate'] },
  { file: 'planner.html', urls: ['/planner'] },
  { file: 'plan.html', urls: ['/plans/:id'] },
  { file: 'sheet.html', urls: ['/plans/:id/sheet'] },
  { file: 'outcomes.html', urls: ['/plans/:id/outcomes'] },
  { file: 'forms.html', urls: ['/plans/:id/forms'] },
];

const TYPES: Record<string, string> = {
  '.js': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.map': 'application/json; charset=utf-8',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.woff2': 'font/woff2',
};

export const pageRoutes: FastifyPluginAsync = async (app) => {
  const built = existsSync(join(WEB_OUT, 'index.html'));
  const missing = '<!doctype html><meta charset="utf-8"><title>brink — pages not built</title><p>The pages have not been built. Run <code>npm run build</code> (or <code>npm start</code>, which builds them when needed), then reload. The API answers meanwhile: <a href="/api/docs">/api/docs</a>.</p>';
  for (const { file, urls } of PAGE_ROUTES) {
    const body = built && existsSync(join(WEB_OUT, file)) ? readFileSync(join(WEB_OUT, file), 'utf8') : null;
    for (const url of urls) {
      app.get(url, { schema: { hide: true } }, async (_req, reply) => {
        reply.header('cache-control', 'no-cache').type('text/html; charset=utf-8');
        return body === null ? reply.code(503).send(missing) : reply.send(body);
      });
    }
  }
  const assets = new Map<string, Buffer>();
  if (built && existsSync(join(WEB_OUT, 'assets'))) for (const f of readdirSync(join(WEB_OUT, 'assets'))) assets.set(f, readFileSync(join(WEB_OUT, 'assets', f)));
  app.get('/assets/:file', { schema: { hide: true } }, async (req, reply) => {
    const { file } = req.params as { file: string };
    const data = assets.get(file);
    if (!data) return reply.code(404).send({ error: 'not-found', message: `no page file /assets/${file.slice(0, 200)}` });
    return reply.header('cache-control', 'public, max-age=31536000, immutable').type(TYPES[extname(file)] ?? 'application/octet-stream').send(data);
  });
  const icon = built && existsSync(join(WEB_OUT, 'favicon.svg')) ? readFileSync(join(WEB_OUT, 'favicon.svg')) : null;
  for (const url of ['/favicon.svg', '/favicon.ico']) {
    app.get(url, { schema: { hide: true } }, async (_req, reply) => (icon ? reply.header('cache-control', 'public, max-age=86400').type('image/svg+xml').send(icon) : reply.code(404).send({ error: 'not-found', message: 'no icon: the pages are not built' })));
  }
};
