/**
 * The access layer of the service: who may send what, and the headers every answer carries.
 * `registerAccess(app, …)` is called by buildApp before any route is registered, so its hooks
 * run for every route there is or will be (a new route is protected without doing anything).
 *
 * On every request (onRequest, before the body is read):
 *
 * 1. **Host allow-list** (DNS rebinding): the `Host` header must name localhost, 127.0.0.1 or [::1],
 *    or an entry of `allowedHosts` (`name` at any port, or `name:port`); `'*'` serves any Host.
 *    Otherwise 421 `misdirected`. The loopback names match at any port: what defeats a rebound
 *    name is the name itself (the attacker's page sends its own), and a page of another local
 *    port is another origin, held off by the rules on writes below and by CORS on reads.
 * 2. **Bearer token**: an `Authorization: Bearer <token>` header is always checked: unknown → 401
 *    `invalid-token`, revoked → 401 `revoked-token`; a valid one names its holder
 *    (`req.accessHolder`), who becomes the author of what the request writes (`authorship`).
 * 3. **Writes** (POST, PUT, PATCH, DELETE):
 *    - an `Origin` header must name an allowed host (a page of this service), else 403 `foreign-origin`;
 *    - with access control on, a valid token is required, else 401 `token-required`;
 *    - without a valid token, a POST, PUT or PATCH must declare a body type a cross-site form or a
 *      no-cors fetch cannot send: none, `text/plain`, `application/x-www-form-urlencoded` and
 *      `multipart/form-data` are refused with 415 `json-required` (send `application/json`,
 *      with `{}` for an action without fields). Any other type makes a browser ask first
 *      (a CORS preflight), which this service never grants; so does a DELETE, and any request
 *      carrying an Authorization header.
 * 4. **Reads** (GET, HEAD) of the API need a valid token too when `tokenForReads` is set; the
 *    pages, their scripts and styles, and the API reference (/api/docs) stay readable.
 *
 * Access control is on when `requireToken` or `tokenForReads` is set (serve.ts sets requireToken
 * whenever it listens beyond loopback), or when the database holds at least one active token:
 * creating a token with `brink token create` turns it on for a service already running on
 * loopback, and revoking the last one turns it off there again.
 *
 * Security headers (@fastify/helmet): a content security policy without 'unsafe-inline' for
 * scripts (the pages' scripts are files under web/; the bench sheet's one inline <style> is
 * allowed by its hash), framing refused (frame-ancestors 'none', X-Frame-Options DENY), nosniff,
 * no referrer. No HSTS: the service speaks plain HTTP; a TLS proxy in front sets its own.
 * The API reference (/api/docs, Swagger UI) is the one exception: its script adds <style>
 * elements, so its answers allow inline styles (never inline scripts).
 */
import { createHash } from 'node:crypto';
import fastifyHelmet from '@fastify/helmet';
import type { FastifyInstance, FastifyReply, FastifyRequest } from 'fastify';
import { renderHtml } from '../protocol/render.js';
import type { TokensRepository } from '../store/tokens.js';

export interface AccessConfig {
  /** every write needs a token even while the database holds none (serve.ts sets it beyond loopback) */
  requireToken?: boolean;
  /** reads of the API need a token too (implies requireToken) */
  tokenForReads?: boolean;
  /** Host names served besides the loopback names: `name` (any port) or `name:port`; '*' serves any Host */
  allowedHosts?: string[] | '*';
}

declare module 'fastify' {
  interface FastifyRequest {
    /** the holder of the valid bearer token the request carries, or null */
    accessHolder: string | null;
  }
}

/** The loopback names served by default (at any port). */
export const LOOPBACK_HOSTS = ['localhost', '127.0.0.1', '[::1]'] as const;

/** Whether an address to listen on is a loopback one (127.0.0.0/8, ::1, localhost). */
export function isLoopback(host: string): boolean {
  const h = host.trim().toLowerCase().replace(/^\[(.*)\]$/, '$1');
  if (h === 'localhost' || h === '::1' || h === '0:0:0:0:0:0:0:1') return true;
  const v4 = /^(?:::ffff:)?(\d{1,3})\.(\d{1,3})\.(\d{1,3})\.(\d{1,3})$/.exec(h);
  return v4 !== null && v4.slice(1).every((o) => Number(o) <= 255) && v4[1] === '127';
}

/** An allow-list entry or a Host header: the name (IPv6 in brackets, lower case) and the port if given. */
interface HostPort {
  name: string;
  port: number | null;
}

export function parseHost(value: string): HostPort | null {
  const v = value.trim().toLowerCase();
  const m = /^(\[[0-9a-f:.]+\]|[^:[\]\s/@]+)(?::(\d{1,5}))?$/.exec(v);
  if (!m) return null;
  const port = m[2] === undefined ? null : Number(m[2]);
  if (port !== null && port > 65535) return null;
  return { name: m[1]!, port };
}

type Entry = HostPort;

/** The sheet's inline style for each paper, allowed by its hash (the sheet stays one self-contained file). */
function sheetStyleHashes(): string[] {
  return (['A4', 'Letter'] as const).map((paper) => {
    const css = /<style>([\s\S]*?)<\/style>/.exec(renderHtml({ title: '', sections: [] }, paper))![1]!;
    return `'sha256-${createHash('sha256').update(css, 'utf8').digest('base64')}'`;
  });
}

/** `Authorization: Bearer <token>`, the scheme in any case (RFC 7235), spaces around the token allowed. */
export const BEARER = /^Bearer[ ]+(\S+)\s*$/i;

const WRITES = new Set(['POST', 'PUT', 'PATCH', 'DELETE']);
/** The body types a browser sends across origins without asking first (the CORS-safelisted ones). */
const SAFELISTED = new Set(['application/x-www-form-urlencoded', 'multipart/form-data', 'text/plain']);

function refuse(reply: FastifyReply, status: number, error: string, message: string) {
  if (status === 401) reply.header('www-authenticate', 'Bearer realm="brink"');
  return reply.code(status).send({ error, message });
}

/**
 * Whether a read is of lab data (the API), not a page, its files or the API reference. Judged by the
 * route the router matched (it decodes the path: `/%61pi/species` is `/api/species`); a path no route
 * matches, by its decoded form.
 */
function isApiRead(req: FastifyRequest): boolean {
  let path = req.routeOptions.url;
  if (path === undefined) {
    try {
      path = decodeURIComponent(req.url.split('?')[0]!);
    } catch {
      return true;
    }
  }
  return path.startsWith('/api/') && !path.startsWith('/api/docs');
}

export async function registerAccess(app: FastifyInstance, o: { tokens: TokensRepository; config?: AccessConfig }): Promise<void> {
  const cfg = o.config ?? {};
  const anyHost = cfg.allowedHosts === '*';
  const entries: Entry[] = LOOPBACK_HOSTS.map((name) => ({ name, port: null }));
  for (const raw of anyHost ? [] : (cfg.allowedHosts as string[] | undefined) ?? []) {
    const h = parseHost(raw);
    if (!h) throw new Error(`allowed hosts: "${raw}" is not a host name, optionally with :port`);
    entries.push(h);
  }
  const allowed = (h: HostPort | null, defaultPort: number): boolean => {
    if (anyHost) return true;
    if (!h) return false;
    const port = h.port ?? defaultPort;
    return entries.some((e) => e.name === h.name && (e.port === null || e.port === port));
  };
  const docsCsp = (csp: string) => csp.replace(/style-src [^;]*/, "style-src 'self' 'unsafe-inline'");
  const accessOn = () => Boolean(cfg.requireToken || cfg.tokenForReads) || o.tokens.activeCount() > 0;

  await app.register(fastifyHelmet, {
    contentSecurityPolicy: {
      useDefaults: false,
      directives: {
        defaultSrc: ["'self'"],
        baseUri: ["'self'"],
        scriptSrc: ["'self'"],
        scriptSrcAttr: ["'none'"],
        styleSrc: ["'self'", ...sheetStyleHashes()],
        imgSrc: ["'self'", 'data:'],
        fontSrc: ["'self'", 'data:'],
        connectSrc: ["'self'"],
        objectSrc: ["'none'"],
        formAction: ["'self'"],
        frameAncestors: ["'none'"],
      },
    },
    frameguard: { action: 'deny' },
    strictTransportSecurity: false,
  });

  app.addHook('onSend', async (req, reply) => {
    const csp = reply.getHeader('content-security-policy');
    if (typeof csp === 'string' && req.url.startsWith('/api/docs')) reply.header('content-security-policy', docsCsp(csp));
  });

  app.decorateRequest('accessHolder', null);
  app.addHook('onRequest', async (req: FastifyRequest, reply: FastifyReply) => {
    const host = req.headers.host;
    if (typeof host !== 'string' || !allowed(parseHost(host), 80)) {
      return refuse(
        reply,
        421,
        'misdirected',
        `this service does not answer to the host name ${host === undefined ? '(none)' : JSON.stringify(host)}: it serves ${anyHost ? 'any' : entries.map((e) => e.name).join(', ')} (add names with --allowed-hosts or BRINK_ALLOWED_HOSTS)`,
      );
    }
    const write = WRITES.has(req.method);
    if (write && req.headers.origin !== undefined) {
      let ok = false;
      try {
        const u = new URL(req.headers.origin);
        ok = (u.protocol === 'http:' || u.protocol === 'https:') && allowed(parseHost(u.host), u.protocol === 'https:' ? 443 : 80);
      } catch {
        ok = false; // "null" (a sandboxed frame, a file) or garbage
      }
      if (!ok) return refuse(reply, 403, 'foreign-origin', `a write from a page of another origin (${req.headers.origin}) is refused`);
    }
    const auth = req.headers.authorization;
    if (auth !== undefined) {
      const m = BEARER.exec(auth);
      if (!m) return refuse(reply, 401, 'invalid-token', 'the Authorization header must be "Bearer <token>"');
      const c = o.tokens.check(m[1]!);
      if (c.status === 'unknown') return refuse(reply, 401, 'invalid-token', 'this token is not known to the service');
      if (c.status === 'revoked') return refuse(reply, 401, 'revoked-token', `this token (${c.token.prefix}…) was revoked at ${c.token.revokedAt}`);
      req.accessHolder = c.token.holder;
      return;
    }
    if (write) {
      if (accessOn()) return refuse(reply, 401, 'token-required', 'this service needs an access token for writes: send "Authorization: Bearer <token>" (tokens come from `brink token create <holder>`)');
      if (req.method !== 'DELETE') {
        const type = req.headers['content-type'];
        const essence = typeof type === 'string' ? type.split(';')[0]!.trim().toLowerCase() : '';
        if (essence === '' || SAFELISTED.has(essence)) {
          return refuse(reply, 415, 'json-required', `a ${req.method} must send a JSON body with "content-type: application/json" (${essence === '' ? 'none was declared' : `not ${essence}`}); an action without fields sends {}`);
        }
      }
      return;
    }
    if (cfg.tokenForReads && isApiRead(req)) {
      return refuse(reply, 401, 'token-required', 'this service needs an access token for reads too: send "Authorization: Bearer <token>"');
    }
  });
}

/**
 * Who a write is by: the holder of the request's token when it carries one, and then the author the
 * client named (if another) goes into the note as "author given: …"; without a token, as sent.
 */
export function authorship(req: FastifyRequest, given: { author?: string | undefined; note?: string | null | undefined }): { author?: string; note: string | null } {
  const holder = req.accessHolder;
  if (!holder) return { ...(given.author !== undefined ? { author: given.author } : {}), note: given.note ?? null };
  const said = given.author !== undefined && given.author !== holder ? `author given: ${given.author}` : null;
  return { author: holder, note: [given.note ?? null, said].filter((x) => x !== null && x !== '').join('; ') || null };
}
