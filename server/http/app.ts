/**
 * The web service: `buildApp({ config, db })` returns a ready fastify
 * instance over an open database; it does not listen (server/serve.ts does).
 *
 * Request bodies, queries and params are zod schemas (fastify-type-provider-zod
 * for the types and the OpenAPI document); validation failures go through the
 * one error handler in errors.ts.
 */
import fastifySwagger from '@fastify/swagger';
import fastifySwaggerUi from '@fastify/swagger-ui';
import Fastify, { type FastifyInstance, type FastifyServerOptions } from 'fastify';
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
import { registerAccess, type AccessConfig } from './access.js';
import { errorHandler, RequestValidationError } from './errors.js';
import { analyzeRoutes } from './routes/analyze.js';
import { calibrateRoutes } from './routes/calibrate.js';
import { errorBody, jobRoutes } from './routes/jobs.js';
import { protocolRoutes } from './routes/protocol.js';
import { outcomeRoutes } from './routes/outcomes.js';
import { hazardRoutes } from './routes/hazards.js';
import { metaRoutes } from './routes/meta.js';
import { planRoutes } from './routes/plans.js';
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
  const app = Fastify({ logger: config.logger ?? false, bodyLimit: config.bodyLimit ?? 5 * 1024 * 1024 }).withTypeProvider<ZodTypeProvider>();

  // Validation with our own formatting of zod issues (field paths, unions resolved).
  app.setValidatorCompiler(({ schema, httpPart }) => (data) => {
    const r = (schema as ZodType).safeParse(data);
    if (r.success) return { value: r.data };
    return { error: new RequestValidationError(httpPart ?? 'body', issueList(r.error)) };
  });
  app.setErrorHandler(errorHandler);
  app.setNotFoundHandler((req, reply) => {
    reply.code(404).send({ error: 'not-found', message: `no route ${req.method} ${req.url.split('?')[0]}` });
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
  await app.register(shelfItemRoutes, { type: 'chemical', path: '/api/chemicals' });
  await app.register(shelfItemRoutes, { type: 'species', path: '/api/species' });
  await app.register(shelfIoRoutes);
  await app.register(analyzeRoutes);
  await app.register(planRoutes);
  await app.register(jobRoutes);
  await app.register(calibrateRoutes);
  await app.register(protocolRoutes);
  await app.register(outcomeRoutes);
  await app.register(hazardRoutes);
  const read: ReadOutcomes = readOutcomes ?? ((planId, candidate) => outcomeSets.current(planId, candidate));
  await app.register(outcomeUpdateRoutes, { service: outcomeUpdateService({ shelf, plans: plansRepo, readOutcomes: read, rerun: (id, holder) => app.plans.rerun(id, holder), pool, jobs }) });
  await app.ready();
  return app;
}
