/**
 * The serving process: open (create, migrate) the database file, seed the demo
 * shelf on the first run, build the app, listen, and shut down gracefully on
 * SIGINT / SIGTERM.
 */
import { buildApp, type App } from './http/app.js';
import { ensureDemoShelf } from './shelf/seed.js';
import { openDatabase } from './store/db.js';

export interface ServeOptions {
  dbPath: string;
  port: number;
  host: string;
  log?: (line: string) => void;
  /** worker threads for engine work (default env BRINK_WORKERS, else the available parallelism) */
  workers?: number;
  /** the longest a job may compute, s (default env BRINK_JOB_TIME_LIMIT, else 600) */
  jobTimeLimit?: number;
}

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
  const db = openDatabase(o.dbPath);
  if (ensureDemoShelf(db)) log(`loaded the demo shelf into ${o.dbPath}`);
  const workers = o.workers ?? envNumber('BRINK_WORKERS', true);
  const jobTimeLimit = o.jobTimeLimit ?? envNumber('BRINK_JOB_TIME_LIMIT', false);
  // compute requests a minute from one client, per endpoint (default 60; README "Limits of the API")
  const rateLimit = envNumber('BRINK_RATE_LIMIT', true);
  const app = await buildApp({
    config: {
      logger: { level: 'warn' },
      closeDatabase: true,
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
