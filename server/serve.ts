/**
 * The serving process: open (create, migrate) the database file, seed the demo
 * shelf on the first run, build the app, listen, and shut down gracefully on
 * SIGINT / SIGTERM.
 */
import { isLoopback, LOOPBACK_HOSTS } from './http/access.js';
import { buildApp, type App } from './http/app.js';
import { tokensRepository } from './store/tokens.js';
import { ensureDemoShelf } from './shelf/seed.js';
import { existsSync } from 'node:fs';
import { openDatabase } from './store/db.js';
import { ensurePages } from './web-build.js';

export interface ServeOptions {
  dbPath: string;
  port: number;
  host: string;
  log?: (line: string) => void;
  /** worker threads for engine work (default env BRINK_WORKERS, else the available parallelism) */
  workers?: number;
  /** the longest a job may compute, s (default env BRINK_JOB_TIME_LIMIT, else 600) */
  jobTimeLimit?: number;
  /** every write needs a token even while the database holds none (default env BRINK_REQUIRE_TOKEN=1); always on beyond loopback */
  requireToken?: boolean;
  /** reads of the API need a token too (default env BRINK_REQUIRE_TOKEN_FOR_READS=1) */
  tokenForReads?: boolean;
  /** Host names served besides the loopback names, `name` or `name:port`, or ['*'] (default env BRINK_ALLOWED_HOSTS, comma-separated) */
  allowedHosts?: string[];
  /**
   * load the invented demo shelf into a database that has never had it (default env BRINK_DEMO, else on loopback
   * only: a lab's shared database gets no invented species unless asked)
   */
  demo?: boolean;
}

/** The service was asked to listen beyond loopback without access control (exit status 2). */
export class AccessRefusedError extends Error {
  override readonly name = 'AccessRefusedError';
}

/** A yes/no setting from the environment: 1/true/yes or 0/false/no (or unset); anything else is refused at start-up. */
export function envFlag(name: string): boolean | undefined {
  const raw = process.env[name]?.trim().toLowerCase();
  if (raw === undefined || raw === '') return undefined;
  if (['1', 'true', 'yes'].includes(raw)) return true;
  if (['0', 'false', 'no'].includes(raw)) return false;
  throw new Error(`${name} must be 1 or 0 (true/false), got "${process.env[name]}"`);
}

/** A comma-separated list of host names (empty entries dropped). */
export const hostList = (text: string) => text.split(',').map((h) => h.trim()).filter(Boolean);

/** A positive number from the environment, or undefined; anything else is refused at start-up. */
function envNumber(name: string, integer: boolean): number | undefined {
  const raw = process.env[name];
  if (raw === undefined || raw === '') return undefined;
  const v = Number(raw);
  if (!(v > 0) || (integer && !Number.isInteger(v))) throw new Error(`${name} must be a positive ${integer ? 'whole ' : ''}number, got "${raw}"`);
  return v;
}

export async function serve(o: ServeOptions): Promise<{ app: App; url: string }> {
  const log = o.log ?? ((l) => process.stdout.write(l + '\n'));
  // Access: open on loopback; beyond it only with access control (a token in the database, or the setting)
  const tokenForReads = o.tokenForReads ?? envFlag('BRINK_REQUIRE_TOKEN_FOR_READS') ?? false;
  let requireToken = (o.requireToken ?? envFlag('BRINK_REQUIRE_TOKEN') ?? false) || tokenForReads;
  const loopback = isLoopback(o.host);
  const refusal = () =>
    new AccessRefusedError(
      `refusing to listen on ${o.host}, beyond this machine, without access control: anyone who can reach the port could write to the shelf. ` +
        `Create a token first (brink token create <holder> --db ${o.dbPath}) or start with --require-token; or listen on 127.0.0.1 only.`,
    );
  // a database that does not exist holds no token: refuse before creating anything
  if (!loopback && !requireToken && o.dbPath !== ':memory:' && !existsSync(o.dbPath)) throw refusal();
  const db = openDatabase(o.dbPath);
  const active = tokensRepository(db).activeCount();
  if (!loopback) {
    if (!requireToken && active === 0) {
      db.close();
      throw refusal();
    }
    requireToken = true; // beyond loopback, revoking the last token never opens the service
  }
  const hostsRaw = o.allowedHosts ?? (process.env.BRINK_ALLOWED_HOSTS !== undefined ? hostList(process.env.BRINK_ALLOWED_HOSTS) : []);
  // a specific address or name to listen on is a name clients use: served too (not the wildcards 0.0.0.0 and ::)
  const wildcard = ['0.0.0.0', '::', '[::]'].includes(o.host.trim());
  const bindName = o.host.includes(':') && !o.host.startsWith('[') ? `[${o.host}]` : o.host;
  const listed = (LOOPBACK_HOSTS as readonly string[]).includes(bindName.toLowerCase()) || hostsRaw.includes(bindName);
  const allowedHosts: string[] | '*' = hostsRaw.includes('*') ? '*' : [...hostsRaw, ...(!wildcard && !listed ? [bindName] : [])];
  const demo = o.demo ?? envFlag('BRINK_DEMO') ?? loopback;
  if (demo) {
    if (ensureDemoShelf(db)) log(`loaded the demo shelf into ${o.dbPath}`);
  } else log(`the demo shelf is not loaded (beyond loopback it is loaded only with --demo or BRINK_DEMO=1)`);
  const workers = o.workers ?? envNumber('BRINK_WORKERS', true);
  const jobTimeLimit = o.jobTimeLimit ?? envNumber('BRINK_JOB_TIME_LIMIT', false);
  // compute requests a minute from one client, per endpoint (default 60; README "Limits of the API")
  const rateLimit = envNumber('BRINK_RATE_LIMIT', true);
  // the pages: built now when web/ is newer than dist/web/ (npm start on a fresh clone or after an edit)
  await ensurePages(log);
  const app = await buildApp({
    config: {
      logger: { level: 'warn' },
      closeDatabase: true,
      access: { requireToken, tokenForReads, allowedHosts },
      ...(workers !== undefined ? { workers } : {}),
      ...(jobTimeLimit !== undefined ? { jobTimeLimit } : {}),
      ...(rateLimit !== undefined ? { rateLimit: { max: rateLimit, timeWindowMs: 60_000 } } : {}),
    },
    db,
  });
  await app.listen({ port: o.port, host: o.host });
  const addr = app.server.address();
  const port = typeof addr === 'object' && addr ? addr.port : o.port;
  const shownHost = o.host.includes(':') ? `[${o.host}]` : o.host;
  const url = `http://${shownHost}:${port}/`;
  log(`brink is serving the shelf at ${url}  (API docs: ${url}api/docs, database: ${o.dbPath})`);
  const access = requireToken
    ? `a token is required for writes${tokenForReads ? ' and reads' : ''} (${active} active)`
    : active > 0
      ? `a token is required for writes (${active} active; open again on loopback if all are revoked)`
      : 'open to this machine (loopback, no tokens)';
  log(`access: ${access}; host names served: ${allowedHosts === '*' ? 'any' : [...LOOPBACK_HOSTS, ...allowedHosts].join(', ')}`);
  if (wildcard && allowedHosts !== '*' && allowedHosts.length === 0) log('  (other machines reach it by a name or address: add those with --allowed-hosts, or they get 421)');
  let closing = false;
  const stop = (signal: string) => {
    if (closing) return;
    closing = true;
    log(`${signal}: closing`);
    app.close().then(
      () => process.exit(0),
      () => process.exit(1),
    );
  };
  process.once('SIGINT', () => stop('SIGINT'));
  process.once('SIGTERM', () => stop('SIGTERM'));
  return { app, url };
}
