/**
 * The web service: `buildApp({ config, db })` returns a ready fastify
 * instance over an open database; it does not listen (server/serve.ts does).
 *
 * Request bodies, queries and params are zod schemas (fastify-type-provider-zod
 * for the types and the OpenAPI document); validation failures go through the
 * one error handler in errors.ts.
 */
import { createHash, randomUUID } from 'node:crypto';
import type { IncomingMessage } from 'node:http';
import fastifyRateLimit from '@fastify/rate-limit';
import fastifySwagger from '@fastify/swagger';
import fastifySwaggerUi from '@fastify/swagger-ui';
import Fastify, { type FastifyInstance, type FastifyReply, type FastifyRequest, type FastifyServerOptions } from 'fastify';
import { jsonSchemaTransform, type ZodTypeProvider } from 'fastify-type-provider-zod';
import type { ZodType } from 'zod';
import { calibrationService, type CalibrationService } from '../calibrate/service.js';
import { defaultPoolSize, WorkCancelledError, WorkerPool } from '../jobs/pool.js';
import { JobRegistry } from '../jobs/registry.js';
import type { TaskInput, TaskKind, TaskOutput } from '../jobs/tasks.js';
import { DomainError } from '../shelf/errors.js';
import { planService, type PlanService } from '../shelf/plans.js';
import { measurementsRepository } from '../store/measurements.js';
import { hazardsRepository, type HazardsRepository } from '../store/hazards.js';
import { sheetService, type SheetService } from '../protocol/service.js';
import { outcomesService, type OutcomesService } from '../protocol/outcomes.js';
import { outcomesRepository } from '../store/outcomes.js';
import { shelfService, type ShelfService } from '../shelf/service.js';
import { plansRepository } from '../store/plans.js';
import type { Db } from '../store/db.js';
import { shelfRepository } from '../store/shelf.js';
import { tokensRepository } from '../store/tokens.js';
import { BEARER, registerAccess, type AccessConfig } from './access.js';
import { errorHandler, RequestValidationError } from './errors.js';
import { registerJsonBody } from './json-body.js';
import { analyzeRoutes } from './routes/analyze.js';
import { calibrateRoutes } from './routes/calibrate.js';
import { errorBody, jobRoutes } from './routes/jobs.js';
import { protocolRoutes } from './routes/protocol.js';
import { outcomeRoutes } from './routes/outcomes.js';
import { hazardRoutes } from './routes/hazards.js';
import { metaRoutes } from './routes/meta.js';
import { pageRoutes } from './routes/pages.js';
import { unitRoutes } from './routes/units.js';
import { planRoutes } from './routes/plans.js';
import { formsRoutes } from './routes/forms.js';
import { outcomeUpdateRoutes } from './routes/outcomes-update.js';
import { outcomeUpdateService, type ReadOutcomes } from '../outcomes/update.js';
import { shelfIoRoutes } from './routes/shelf-io.js';
import { shelfItemRoutes } from './routes/shelf-items.js';
import { issueList } from '../schema/mixture.js';
import { VERSION } from '../version.js';

export interface AppConfig {
  /** fastify logger option (false in tests) */
  logger?: FastifyServerOptions['logger'];
  /** close the database when the app closes (the serving process owns it) */
  closeDatabase?: boolean;
  /** largest accepted request body, bytes (default 5 MiB: whole-shelf imports) */
  bodyLimit?: number;
  /** worker threads for engine work (default: the available parallelism, at least 1) */
  workers?: number;
  /** smallest interval between two progress reports of a job, ms (default 100) */
  progressIntervalMs?: number;
  /** the longest a job may compute, s (default 600; a plan's timeLimit may only shorten it) */
  jobTimeLimit?: number;
  /** the longest engine work a request waits for (analyze, fits), s (default 120) */
  requestTimeLimit?: number;
  /** jobs held in memory (default 200), and how long an ended job stays readable, s (default 3600) */
  maxJobs?: number;
  keepJobs?: number;
  /** access control, Host allow-list and security headers (server/http/access.ts); default: loopback names, tokens required once one exists */
  access?: AccessConfig;
  /**
   * Rate limit of the compute endpoints (COMPUTE_ROUTES), per client: the bearer token when the
   * request carries one (its hash), else the address. Default 60 requests a minute; false: none.
   */
  rateLimit?: false | { max?: number; timeWindowMs?: number };
}

/**
 * The endpoints that compute (engine work in the pool, fits, sheets): rate-limited per client.
 * A test (tests/http/limits.test.ts) checks each is a route of the app.
 */
export const COMPUTE_ROUTES = [
  'POST /api/analyze',
  'POST /api/analyze/mixture',
  'POST /api/plans',
  'POST /api/plans/:id/rerun',
  'POST /api/plans/:id/candidates/:species/spectrum',
  'POST /api/plans/:id/candidates/:species/simulate',
  'POST /api/fits/msd',
  'POST /api/fits/kinetics',
  'POST /api/fits/drift',
  'POST /api/fits/quantal',
  'POST /api/species/:id/measurements',
  'GET /api/plans/:id/sheet',
  'POST /api/plans/:id/sheet',
  'POST /api/plans/:id/outcomes',
  'GET /api/plans/:id/outcomes/dose-response',
  'POST /api/plans/:id/update',
  'POST /api/plans/:id/next',
  // not engine work, but a whole-shelf import parses and checks up to 10,000 entries in the request
  'POST /api/shelf/import',
] as const;

/** An incoming x-request-id is kept when it is short and plain; otherwise a new one is made. */
const REQUEST_ID = /^[A-Za-z0-9._:-]{1,64}$/;
function requestId(req: IncomingMessage): string {
  const given = req.headers['x-request-id'];
  return typeof given === 'string' && REQUEST_ID.test(given) ? given : randomUUID();
}

/** The rate limit's key: the bearer token's hash when there is one (a lab member on a shared address), else the address. */
function clientKey(req: FastifyRequest): string {
  // the token itself, as the access layer reads it: a respelt header (BEARER, extra spaces) is the same client
  const token = typeof req.headers.authorization === 'string' ? BEARER.exec(req.headers.authorization)?.[1] : undefined;
  if (token !== undefined) return 'token:' + createHash('sha256').update(token).digest('hex').slice(0, 32);
  return 'ip:' + req.ip;
}

declare module 'fastify' {
  interface FastifyInstance {
    db: Db;
    shelf: ShelfService;
    plans: PlanService;
    calibration: CalibrationService;
    hazards: HazardsRepository;
    sheets: SheetService;
    /** outcomes of bench sheets and their dose–response fit (protocol/outcomes.ts) */
    outcomes: OutcomesService;
    pool: WorkerPool;
    jobs: JobRegistry;
    /** run engine work in the pool while the request waits, within config.requestTimeLimit (a 422 time-limit past it) */
    compute: <K extends TaskKind>(kind: K, input: TaskInput<K>) => Promise<TaskOutput<K>>;
    /** every route of the app as registered, `{ method, url }` (HEAD included): the fuzz tests walk it */
    routeTable: { method: string; url: string }[];
  }
}

export type App = FastifyInstance;
export { VERSION };

/**
 * Build the app; `await app.ready()` is done here, so it can be injected into at once.
 * `readOutcomes`: how the model-update routes read a plan's outcomes (server/outcomes/update.ts ReadOutcomes);
 * by default the outcome sets stored in `db` (store/outcomes.ts).
 */
export async function buildApp({ config = {}, db, readOutcomes }: { config?: AppConfig; db: Db; readOutcomes?: ReadOutcomes }): Promise<App> {
  const app = Fastify({
    logger: config.logger ?? false,
    bodyLimit: config.bodyLimit ?? 5 * 1024 * 1024,
    // every log line of a request carries its id (reqId); the client sees it in x-request-id
    requestIdHeader: false,
    genReqId: requestId,
    // errors raised before routing (a URL whose percent-encoding is not UTF-8, a path parameter past
    // fastify's maxParamLength of 100): the project's JSON shape and the request id, and never the URL echoed
    frameworkErrors: (err, req, reply) => {
      reply.header('x-request-id', req.id);
      const known: Record<string, [number, string, string]> = {
        FST_ERR_BAD_URL: [400, 'bad-url', 'the URL is not valid: a percent-encoded part is not UTF-8'],
        FST_ERR_MAX_PARAM_LENGTH: [414, 'param-too-long', 'a path parameter is longer than 100 characters (an id is at most 64)'],
      };
      const [status, code, message] = known[err.code] ?? [500, 'internal', 'internal error'];
      if (status >= 500) req.log.error({ err }, 'framework error');
      void (reply as unknown as FastifyReply).code(status).send(status >= 500 ? { error: 'internal', message } : { error: status === 414 ? 'too-large' : 'bad-request', code, message });
    },
  }).withTypeProvider<ZodTypeProvider>();
  app.addHook('onRequest', async (req, reply) => {
    // on the raw response: also there for a hijacked reply (the job event stream)
    reply.raw.setHeader('x-request-id', req.id);
  });
  // JSON bodies: depth checked before parsing, __proto__ keys refused (json-body.ts)
  registerJsonBody(app);
  const routeTable: { method: string; url: string }[] = [];
  app.decorate('routeTable', routeTable);
  app.addHook('onRoute', (route) => {
    for (const method of Array.isArray(route.method) ? route.method : [route.method]) routeTable.push({ method, url: route.url });
  });

  // Validation with our own formatting of zod issues (field paths, unions resolved).
  app.setValidatorCompiler(({ schema, httpPart }) => (data) => {
    const r = (schema as ZodType).safeParse(data);
    if (r.success) return { value: r.data };
    return { error: new RequestValidationError(httpPart ?? 'body', issueList(r.error)) };
  });
  app.setErrorHandler(errorHandler);
  app.setNotFoundHandler((req, reply) => {
    const path = req.url.split('?')[0]!;
    reply.code(404).send({ error: 'not-found', message: `no route ${req.method} ${path.length > 200 ? `${path.slice(0, 200)}…` : path}` });
  });

  // The database: decorate, and close with the app when it belongs to the app.
  app.decorate('db', db);
  // Who may send what, and the security headers: hooks on the root, before any route exists (access.ts).
  await registerAccess(app, { tokens: tokensRepository(db), ...(config.access ? { config: config.access } : {}) });
  const shelf = shelfService(shelfRepository(db));
  app.decorate('shelf', shelf);
  // engine work off the event loop: a pool of worker threads, and jobs for the long work (server/jobs/)
  const pool = new WorkerPool({ size: config.workers ?? defaultPoolSize(), ...(config.progressIntervalMs !== undefined ? { progressIntervalMs: config.progressIntervalMs } : {}) });
  const jobs = new JobRegistry({
    timeLimitMs: (config.jobTimeLimit ?? 600) * 1000,
    ...(config.maxJobs !== undefined ? { maxJobs: config.maxJobs } : {}),
    ...(config.keepJobs !== undefined ? { keepEndedMs: config.keepJobs * 1000 } : {}),
    describeError: (e) => errorBody(e, app.log),
  });
  app.decorate('pool', pool);
  app.decorate('jobs', jobs);
  const requestLimitMs = (config.requestTimeLimit ?? 120) * 1000;
  // the request's limit counts from the request, queueing included (a queued task is dropped at it)
  app.decorate('compute', async <K extends TaskKind>(kind: K, input: TaskInput<K>) => {
    const limit = new AbortController();
    const timer = setTimeout(() => limit.abort(), requestLimitMs);
    try {
      return await pool.run(kind, input, { signal: limit.signal, lane: 'request' });
    } catch (e) {
      if (e instanceof WorkCancelledError && limit.signal.aborted)
        throw new DomainError('time-limit', `the computation was stopped after the service's limit for a request, ${requestLimitMs / 1000} s: ask for less`);
      throw e;
    } finally {
      clearTimeout(timer);
    }
  });
  app.addHook('onClose', async () => {
    jobs.close();
    await pool.close();
  });
  const plansRepo = plansRepository(db);
  app.decorate('plans', planService(shelf, plansRepo, { pool, jobs }));
  const hazards = hazardsRepository(db);
  app.decorate('hazards', hazards);
  const sheets = sheetService(plansRepo, shelf.repo, hazards);
  app.decorate('sheets', sheets);
  const outcomeSets = outcomesRepository(db);
  app.decorate('outcomes', outcomesService(plansRepo, sheets, outcomeSets));
  app.decorate('calibration', calibrationService(shelf, measurementsRepository(db)));
  if (config.closeDatabase) app.addHook('onClose', async () => db.close());

  // rate limits on the compute endpoints (only those: reads and edits are cheap)
  const limit = config.rateLimit === false ? null : { max: config.rateLimit?.max ?? 60, timeWindow: config.rateLimit?.timeWindowMs ?? 60_000 };
  if (limit) {
    const compute = new Set<string>(COMPUTE_ROUTES);
    app.addHook('onRoute', (route) => {
      const methods = Array.isArray(route.method) ? route.method : [route.method];
      if (methods.some((m) => compute.has(`${m} ${route.url}`))) route.config = { ...(route.config ?? {}), rateLimit: limit } as typeof route.config;
    });
    await app.register(fastifyRateLimit, {
      global: false,
      keyGenerator: clientKey,
      errorResponseBuilder: (_req, ctx) =>
        Object.assign(new Error(`too many compute requests from this client: at most ${ctx.max} in ${limit.timeWindow / 1000} s; try again in ${Math.ceil(ctx.ttl / 1000)} s`), {
          statusCode: 429,
          code: 'rate-limited',
          retryAfter: Math.ceil(ctx.ttl / 1000),
        }),
    });
  }

  await app.register(fastifySwagger, {
    openapi: {
      info: {
        title: 'brink',
        description: 'Experiment-design planner for multi-species catalytic mixtures: the shelf, calibration fits, linear stability, dose plans and bench sheets. Physical values are SI numbers or strings with units.',
        version: VERSION,
      },
      tags: [
        { name: 'shelf', description: 'Chemicals and species with immutable revisions' },
        { name: 'analysis', description: 'Linear stability of a sample' },
        { name: 'planner', description: 'Smallest doses that cross a boundary, stored as plans' },
        { name: 'jobs', description: 'Long work (plans) run off the request: state, progress, cancel' },
        { name: 'calibrate', description: 'Coefficients from raw measurements' },
        { name: 'bench sheet', description: 'Printable protocols for plans, with hazards as handled' },
        { name: 'outcomes', description: 'What each tube did at the bench, and the empirical threshold (quantal dose–response)' },
        { name: 'meta', description: 'Service facts' },
      ],
      // a shared service wants `Authorization: Bearer <token>` on writes (reads too by its setting); open on loopback without tokens
      components: { securitySchemes: { bearer: { type: 'http', scheme: 'bearer', description: 'An access token from `brink token create <holder>`: needed for every write when the service has tokens or listens beyond loopback, for reads too with --require-token-for-reads' } } },
      security: [{}, { bearer: [] }],
    },
    transform: jsonSchemaTransform,
  });
  await app.register(fastifySwaggerUi, { routePrefix: '/api/docs' });

  await app.register(metaRoutes);
  await app.register(pageRoutes);
  await app.register(unitRoutes);
  await app.register(shelfItemRoutes, { type: 'chemical', path: '/api/chemicals' });
  await app.register(shelfItemRoutes, { type: 'species', path: '/api/species' });
  await app.register(shelfIoRoutes);
  await app.register(analyzeRoutes);
  await app.register(planRoutes);
  await app.register(formsRoutes);
  await app.register(jobRoutes);
  await app.register(calibrateRoutes);
  await app.register(protocolRoutes);
  await app.register(outcomeRoutes);
  await app.register(hazardRoutes);
  const read: ReadOutcomes = readOutcomes ?? ((planId, candidate) => outcomeSets.current(planId, candidate));
  await app.register(outcomeUpdateRoutes, { service: outcomeUpdateService({ shelf, plans: plansRepo, readOutcomes: read, rerun: (id, holder, series) => app.plans.rerun(id, holder, series), pool, jobs }) });
  await app.ready();
  return app;
}
