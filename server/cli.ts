/**
 * The `brink` command line.
 *
 *   brink analyze <mixture.json> [--format json|text]      linear stability of one sample
 *   brink screen <request.json> [--format json|text]       smallest dose of each candidate (no database)
 *   brink simulate <mixture.json> [--dims 1|2] [--points N] [--duration T] [--out DIR]   what forms past onset
 *   brink fit <msd|kinetics|drift> <file> [options]        coefficients from raw measurements
 *   brink fit quantal <file> [--link …] [--scale …]        quantal dose–response (ED50) from dose, tubes, responded
 *   brink sheet <plan-id> [--db PATH] [options]            the bench sheet of a stored plan
 *   brink outcomes <plan-id> [file] [--db PATH] [options]  what each tube did: show, record (CSV/JSON), --dose-response
 *   brink plan <request.json> [--db PATH]                  compute and store a plan (as POST /api/plans)
 *   brink update <plan-id> [--db PATH] [--apply] …         the model update from the plan's outcomes; --apply writes it
 *   brink next <plan-id> [--db PATH] [--tubes N] …         design the next round's doses and store the next plan
 *   brink serve [--db PATH] [--port N] [--host H] …      the web service (access: --require-token, --require-token-for-reads, --allowed-hosts)
 *   brink token create <holder> | list | revoke <id|prefix> [--db PATH]   access tokens of the service
 *   brink seed [--reset] [--yes] [--db PATH]               load the demo shelf
 *   brink backup <file> [--db PATH]                        online backup, also while the service runs
 *   brink restore <file> [--db PATH] [--yes]               check a backup, keep the old file, put the backup in place
 *   brink help                                             the usage text (USAGE below has every option)
 *   brink --version | version                              the version (bin/brink.js answers it before loading this file)
 *
 * Output goes to stdout; problems with the input go to stderr with exit
 * status 2 and name the field; no stack traces (set BRINK_DEBUG=1 to see one
 * for an internal error, which exits with status 1).
 */
import { benchText, fmt, fmtAmountOf, fmtDuration, fmtWithSd, formatNumber, kindOfSiUnit, type AmountContext } from './units/display.js';
import { existsSync, mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { createInterface } from 'node:readline/promises';
import { parseArgs } from 'node:util';
import { analyze, type AnalysisResult } from './engine/analyze.js';
import { simulate } from './engine/simulate/index.js';
import { DIMENSIONS, parseQuantity } from './units/index.js';
import { EngineDomainError, EngineInputError } from './engine/types.js';
import { formatPath, MixtureFileError, parseMixture } from './schema/mixture.js';
import { LIMITS } from './schema/limits.js';
import { tooDeep } from './http/json-body.js';
import { parseScreenRequest, screenOutput } from './schema/screen.js';
import { screen, screenWarnings } from './engine/planner.js';
import { progressBar } from './jobs/progress-bar.js';
import { parseQuantalOptions, runQuantalFit } from './calibrate/quantal.js';
import { FIT_METHODS, parseFitOptions, runFit, type FitMethod } from './calibrate/run.js';
import { InputError } from './shelf/errors.js';
import { seedDemoShelf } from './shelf/seed.js';
import { BackupError, backupDatabase, inspectBackup, restoreDatabase } from './store/backup.js';
import { DatabaseTooNewError, openDatabase } from './store/db.js';
import { TokenError, tokensRepository } from './store/tokens.js';
import { hazardsRepository } from './store/hazards.js';
import { plansRepository } from './store/plans.js';
import { shelfRepository, NotFoundError, StaleRevisionError } from './store/shelf.js';
import { outcomesRepository } from './store/outcomes.js';
import { outcomesService, readCsvEntry, readJsonEntry } from './protocol/outcomes.js';
import { QUANTAL_LINKS, type QuantalLink } from './engine/fit/quantal.js';
import { sheetService } from './protocol/service.js';
import { SheetNotFitError, splitDoses } from './protocol/sheet.js';
import { DomainError, ImportConflictError } from './shelf/errors.js';
import { VERSION } from './version.js';
import { WorkerPool } from './jobs/pool.js';
import { ENDED_STATES, JobRegistry, type Job } from './jobs/registry.js';
import { shelfService } from './shelf/service.js';
import { planService } from './shelf/plans.js';
import { outcomeUpdateService, SI_UNIT, type NextJobResult, type UpdateJobResult } from './outcomes/update.js';
import type { Band } from './engine/update.js';

export interface Io {
  out: (text: string) => void;
  err: (text: string) => void;
  /** stderr is a terminal this many columns wide: long commands (screen) draw a progress bar on it; absent: none */
  errColumns?: number;
}

const defaultIo: Io = {
  out: (t) => process.stdout.write(t),
  err: (t) => process.stderr.write(t),
  ...(process.stderr.isTTY ? { errColumns: process.stderr.columns || 80 } : {}),
};

const USAGE = `brink — experiment-design planner for catalytic mixtures

usage:
  brink analyze <mixture.json> [--format json|text]   linear stability of one sample
  brink screen <request.json> [--format json|text]   smallest dose of each candidate that crosses a boundary
  brink simulate <mixture.json> [--dims 1|2] [--points N] [--duration T] [--out DIR]
              [--tolerance E] [--noise A] [--seed N] [--frames N] [--max-steps N] [--chemicals quasi-static|dynamic]
              [--repair global|local]
                                                     simulate the sample past onset (nonlinear model, docs/model.md §14):
                                                     prints a JSON summary (SI units): the linear and the measured early
                                                     growth, the dominant length over time, clusters and their make-up,
                                                     travelling bands; --out writes frames.json (header) and frames.f32
                                                     (Float32, little-endian, frame by frame, species by species, x fastest)
                                                     --points: cells per side, a power of two (default 512 in 1D, 128 in 2D)
                                                     --duration: e.g. "20 min" or seconds (default: the mixture's duration,
                                                     else 20 growth times); --max-steps (default 100000): a run that
                                                     needs more steps stops there and says so (run.completed false)
                                                     --chemicals dynamic: the chemical fields evolve in time instead of
                                                     following the particles at once (slower; compare with the default)
                                                     --repair local: negative densities at under-resolved cluster edges
                                                     are made up from the nearest cells, not the whole chamber (slower)
  brink fit <msd|kinetics|drift> <file.csv|file.json> [options]   coefficients from raw data
      msd:      --model passive-2d|passive-3d|active-2d|active-3d|active-focal  --offset
                --radius R (fix the rotation time by Stokes–Einstein–Debye)  --temperature T
                a curve (lag [s], msd [um^2], sd) or tracked positions (track, t [s], x [um], y [um], z):
                tracks are recognised by a first column named track, or --tracks; then
                --max-lag 5s  --lags 16  --unweighted (ordinary least squares, for comparison)
      kinetics: --particles DENSITY | --enzyme CONCENTRATION   (per-particle maximal turnover)
  brink fit quantal <file.csv|file.json> [--link logit|probit|cloglog] [--scale log10|linear]
                columns dose [unit], tubes, responded: the 50 % dose (ED50) by maximum likelihood
  brink sheet <plan-id> [--db PATH] [--candidate ID] [--format html|md|json] [--paper A4|Letter] [--out FILE]
              [--sample-volume 100uL] [--replicates 3] [--min-volume 1uL] [--overage 0.1] [--buffer NAME] [--options FILE]
              [--doses "0,1e6 1/mL,1e7 1/mL"] (the dopant doses themselves; needed when any dose crosses)
              [--operator NAME] [--tube-volume 1.5mL] [--chamber-volume 10uL] [--closed-chamber]
                                                     the bench sheet of a stored plan; a plan that does not fit
                                                     prints why and what would fix it, and exits 2
  brink outcomes <plan-id> [--db PATH] [--candidate ID]   the outcomes entered for a plan (current and every revision)
  brink outcomes <plan-id> <file.csv|file.json> [--db PATH] [sheet options as for brink sheet]
              [--author NAME] [--note TEXT] [--base-revision N]
                                                     record what each tube did (CSV: tube, state, onset [min],
                                                     length [um], notes; or JSON, or the filled-in sheet JSON)
  brink outcomes <plan-id> --dose-response [--candidate ID] [--revision N] [--link logit|probit|cloglog] [--scale log10|linear]
                                                     the empirical threshold: a quantal fit of the tubes that crossed
  brink plan <request.json> [--db PATH] [--format json|text]
                                                     compute and store a plan (the request of POST /api/plans);
                                                     prints its id and each candidate's threshold
  brink update <plan-id> [--db PATH] [--candidate ID] [--samples N] [--misclassification E] [--seed N]
              [--apply] [--author NAME] [--format json|text]
                                                     update the shelf's coefficients from the plan's outcomes
                                                     (--samples: prior draws when the plan ran without any;
                                                     importance sampling or sequential Monte Carlo, with the ESS,
                                                     the bands before and after, the consistency check); --apply
                                                     writes them as species revisions (refused when inconsistent)
  brink next <plan-id> [--db PATH] [--candidate ID] [--tubes N] [--min-dose-ratio R] [--min-dose D] [--max-dose D]
              [--simulations N] [--format json|text]
                                                     design the next round's doses from the outcomes and store the
                                                     next plan (the same request on the current shelf, with the
                                                     designed doses as its sheet's series): prints its id
  brink serve [--db PATH] [--port N] [--host H]        run the web service (env BRINK_DB, PORT, HOST)
              [--require-token] [--require-token-for-reads] [--allowed-hosts NAMES] [--demo | --no-demo]
                                                     open on loopback; beyond it (e.g. --host 0.0.0.0) only with
                                                     access control: a token in the database, or --require-token
                                                     (env BRINK_REQUIRE_TOKEN=1). With tokens every write needs
                                                     "Authorization: Bearer <token>"; reads too with
                                                     --require-token-for-reads (BRINK_REQUIRE_TOKEN_FOR_READS=1).
                                                     --allowed-hosts "brink.lab,10.0.0.5:3080" (BRINK_ALLOWED_HOSTS):
                                                     Host names served besides localhost, 127.0.0.1, [::1]; "*" any.
                                                     The invented demo shelf is loaded into a new database on
                                                     loopback only, unless --demo / --no-demo (BRINK_DEMO=1/0)
  brink token create <holder> [--db PATH]            a new access token: the secret is printed once (stdout)
  brink token list [--db PATH] [--format text|json]  tokens: id, prefix, holder, created, revoked
  brink token revoke <id|prefix> [--db PATH]         revoke a token (refused from then on; never deleted)
  brink seed [--reset] [--yes] [--db PATH]             load the demo shelf; --reset empties the database first
  brink backup <file> [--db PATH]                      copy the database to a new file (safe while brink serve runs)
  brink restore <file> [--db PATH] [--yes]             replace the database by a backup: checks it first, keeps the
                                                     old file as <db>.before-restore-<time>; refused while in use
  brink help                                         this text
  brink --version | version                          the version

defaults: --db ./data/brink.sqlite, --port 3080, --host 127.0.0.1

Values in the mixture file are SI numbers or strings with units ("0.25 um^2/s",
"50 mM", "1e-3 um^-3", "5 percent"); see seeds/examples/ and README.md.
`;

/** A problem the user can fix: printed without a stack trace, exit status 2. */
export class UsageError extends Error {
  override readonly name = 'UsageError';
}

function readText(path: string): string {
  try {
    return readFileSync(path, 'utf8');
  } catch (e) {
    throw new UsageError(`cannot read ${path}: ${(e as NodeJS.ErrnoException).code ?? (e as Error).message}`);
  }
}

function parseJson(text: string, path: string): unknown {
  // the same depth limit as a request body: no stack overflow further on
  const deep = tooDeep(text, LIMITS.depth);
  if (deep !== null) throw new UsageError(`${path} is nested deeper than ${LIMITS.depth} levels (objects and arrays), at ${formatPath(deep) || 'the top'}: no file brink reads is nested so deep`);
  try {
    return JSON.parse(text) as unknown;
  } catch (e) {
    throw new UsageError(`${path} is not valid JSON: ${(e as Error).message}`);
  }
}

function readJson(path: string): unknown {
  return parseJson(readText(path), path);
}

const g = (x: number, digits = 3) => (x === 0 ? '0' : Math.abs(x) >= 1e4 || Math.abs(x) < 1e-2 ? x.toExponential(digits - 1) : x.toPrecision(digits));

// values with units are written as on the pages and the bench sheet (server/units/display.ts)
const duration = (t: number): string => fmtDuration(t);
const length = (x: number): string => fmt(x, 'length');
/** a dose in particles/mL, compact (no spaces) for lists */
const perMlCompact = (x: number, digits = 3) => `${formatNumber(x * 1e-6, digits, true)}`;

/** A short human summary of an analysis. */
export function formatText(r: AnalysisResult): string {
  const lines: string[] = [];
  const head = r.state === 'stable' ? `stable (slowest decay rate ${g(-r.growthRate)} 1/s)` : `${r.state}, growth time ${duration(r.growthTime!)}`;
  lines.push(`state:        ${head}`);
  const fm = r.fastestMode;
  const where = fm.index !== null ? `mode n = ${fm.index}, ` : '';
  const wl = fm.wavelength !== null ? `wavelength ${length(fm.wavelength)}` : 'longest wave (k → 0)';
  const per = fm.oscillationPeriod !== null ? `, period ${duration(fm.oscillationPeriod)}` : '';
  lines.push(`fastest mode: ${where}${wl}${per}`);
  if (r.composition.length > 0) {
    const parts = r.composition.map((c) => `${c.species} ${c.weight >= 0 ? '+' : ''}${g(c.weight, 2)}`);
    lines.push(`composition:  ${parts.join(', ')}  (same sign gathers together, opposite sign is pushed out)`);
  }
  const c = r.criteria;
  if (c.stationary) lines.push(`stationary:   Σ αμρ/D = ${g(c.stationary.value)} 1/s vs threshold ${g(c.stationary.threshold)} 1/s → ${c.stationary.met ? 'met' : 'not met'}`);
  if (c.oscillatory) lines.push(`oscillatory:  Σ αμρ = ${g(c.oscillatory.value)} m^2/s^2 vs threshold ${g(c.oscillatory.threshold)} m^2/s^2 → ${c.oscillatory.met ? 'met' : 'not met'}${c.oscillatory.sufficientOnly ? ' (sufficient only)' : ''}`);
  if (!c.stationary && c.determinant) lines.push(`determinant:  ${g(c.determinant.value)} (< 0 means a real eigenvalue has crossed at k1) → ${c.determinant.met ? 'met' : 'not met'}`);
  for (const f of r.checks.fuel) lines.push(f.absent ? `fuel life:    ${f.chemical} is absent (concentration 0): used up at once` : `fuel life:    ${f.chemical} lasts about ${duration(f.lifetime)}`);
  for (const s of r.checks.sedimentation) {
    const cross = s.timeToCrossDepth !== null ? `, crosses the depth in ${duration(s.timeToCrossDepth)}` : ` (${s.note ?? 'no chamber depth'})`;
    lines.push(`gravity:      ${s.species} ${s.direction} at ${fmt(s.speed, 'speed')} (Stokes drag)${cross}, sedimentation length ${length(s.sedimentationLength)}`);
  }
  if (r.warnings.length > 0) {
    lines.push('warnings:');
    for (const w of r.warnings) lines.push(`  - ${w.code}: ${benchText(w.message)}`);
  }
  return lines.join('\n') + '\n';
}

function cmdAnalyze(args: string[], io: Io): number {
  const { values, positionals } = parseArgs({ args, allowPositionals: true, options: { format: { type: 'string', default: 'json' } } });
  if (positionals.length !== 1) throw new UsageError('usage: brink analyze <mixture.json> [--format json|text]');
  const format = values.format;
  if (format !== 'json' && format !== 'text') throw new UsageError(`--format: expected json or text, got "${format}"`);
  const mixture = parseMixture(readJson(positionals[0]!));
  const result = analyze(mixture);
  io.out(format === 'json' ? JSON.stringify(result, null, 2) + '\n' : formatText(result));
  return 0;
}

export const defaults = () => ({
  db: process.env.BRINK_DB ?? 'data/brink.sqlite',
  port: process.env.PORT ?? '3080',
  host: process.env.HOST ?? '127.0.0.1',
});

function parsePort(text: string): number {
  const n = Number(text);
  if (!Number.isInteger(n) || n < 0 || n > 65535) throw new UsageError(`--port: expected an integer from 0 to 65535, got "${text}"`);
  return n;
}

async function cmdServe(args: string[]): Promise<number> {
  const d = defaults();
  const { values } = parseArgs({
    args,
    options: {
      db: { type: 'string', default: d.db },
      port: { type: 'string', default: d.port },
      host: { type: 'string', default: d.host },
      'require-token': { type: 'boolean' },
      'require-token-for-reads': { type: 'boolean' },
      'allowed-hosts': { type: 'string' },
      demo: { type: 'boolean' },
      'no-demo': { type: 'boolean' },
    },
  });
  if (values.demo && values['no-demo']) throw new UsageError('--demo and --no-demo: choose one');
  const { serve, hostList } = await import('./serve.js');
  await serve({
    dbPath: values.db,
    port: parsePort(values.port),
    host: values.host,
    ...(values['require-token'] ? { requireToken: true } : {}),
    ...(values['require-token-for-reads'] ? { tokenForReads: true } : {}),
    ...(values['allowed-hosts'] !== undefined ? { allowedHosts: hostList(values['allowed-hosts']) } : {}),
    ...(values.demo ? { demo: true } : values['no-demo'] ? { demo: false } : {}),
  });
  return await new Promise<number>(() => {
    /* runs until a signal closes the server (serve.ts exits the process) */
  });
}

function cmdToken(args: string[], io: Io): number {
  const { values, positionals } = parseArgs({ args, allowPositionals: true, options: { db: { type: 'string', default: defaults().db }, format: { type: 'string', default: 'text' } } });
  const [sub, ...rest] = positionals;
  const usage = 'usage: brink token create <holder> | brink token list | brink token revoke <id|prefix>   [--db PATH]';
  if (sub === 'create' ? rest.length !== 1 : sub === 'revoke' ? rest.length !== 1 : sub === 'list' ? rest.length !== 0 : true) throw new UsageError(usage);
  if (sub !== 'create' && !existsSync(values.db)) throw new UsageError(`no database at ${values.db} (use --db PATH or BRINK_DB)`);
  const db = openDatabase(values.db);
  try {
    const tokens = tokensRepository(db);
    if (sub === 'create') {
      const { secret, token } = tokens.create(rest[0]!);
      // the secret alone on stdout (TOKEN=$(brink token create ada)); what it is on stderr
      io.out(`${secret}\n`);
      io.err(
        `token ${token.id} for ${token.holder} (${token.prefix}…) created in ${values.db}.\n` +
          'This is the only time the secret is shown: only its hash is kept. Clients send it as the header\n' +
          '  Authorization: Bearer <token>\n' +
          'From now on every write to a service on this database needs a token.\n',
      );
    } else if (sub === 'revoke') {
      const t = tokens.revoke(rest[0]!);
      io.out(`revoked token ${t.id} (${t.prefix}…, ${t.holder}) at ${t.revokedAt}\n`);
    } else {
      const list = tokens.list();
      if (values.format === 'json') io.out(JSON.stringify(list, null, 2) + '\n');
      else if (values.format !== 'text') throw new UsageError(`--format: expected text or json, got "${values.format}"`);
      else if (list.length === 0) io.out('no tokens: a service on this database is open on loopback and refuses to listen beyond it\n');
      else {
        const rows = [['id', 'prefix', 'holder', 'created', 'revoked'], ...list.map((t) => [String(t.id), `${t.prefix}…`, t.holder, t.createdAt, t.revokedAt ?? '—'])];
        const w = rows[0]!.map((_, i) => Math.max(...rows.map((r) => r[i]!.length)));
        io.out(rows.map((r) => r.map((c, i) => (i === r.length - 1 ? c : c.padEnd(w[i]!))).join('  ')).join('\n') + '\n');
      }
    }
  } finally {
    db.close();
  }
  return 0;
}

async function confirm(question: string): Promise<boolean> {
  if (!process.stdin.isTTY) return false;
  const rl = createInterface({ input: process.stdin, output: process.stderr });
  try {
    const answer = await rl.question(question);
    return /^y(es)?$/i.test(answer.trim());
  } finally {
    rl.close();
  }
}

async function cmdSeed(args: string[], io: Io): Promise<number> {
  const { values } = parseArgs({ args, options: { db: { type: 'string', default: defaults().db }, reset: { type: 'boolean', default: false }, yes: { type: 'boolean', default: false } } });
  const path = values.db;
  if (values.reset && existsSync(path)) {
    const ok = values.yes || (await confirm(`This deletes ${path} (the whole shelf, every revision) and loads the demo shelf. Continue? [y/N] `));
    if (!ok) {
      io.err(values.yes || process.stdin.isTTY ? 'not reset\n' : 'refusing to reset without --yes (no terminal to ask)\n');
      return 2;
    }
    for (const f of [path, `${path}-wal`, `${path}-shm`]) rmSync(f, { force: true });
  }
  const db = openDatabase(path);
  try {
    const s = seedDemoShelf(db);
    io.out(`demo shelf loaded into ${path}: ${s.created} created, ${s.revised} revised, ${s.unchanged} unchanged\n`);
  } finally {
    db.close();
  }
  return 0;
}

async function cmdBackup(args: string[], io: Io): Promise<number> {
  const { values, positionals } = parseArgs({ args, allowPositionals: true, options: { db: { type: 'string', default: defaults().db } } });
  if (positionals.length !== 1) throw new UsageError('usage: brink backup <file> [--db PATH]');
  const r = await backupDatabase(values.db, positionals[0]!);
  io.out(
    `backed up ${values.db} to ${positionals[0]}: ${r.bytes} bytes, schema version ${r.schemaVersion}, integrity ok; ` +
      `${r.species} species, ${r.chemicals} chemicals, ${r.plans} plans\n`,
  );
  return 0;
}

async function cmdRestore(args: string[], io: Io): Promise<number> {
  const { values, positionals } = parseArgs({ args, allowPositionals: true, options: { db: { type: 'string', default: defaults().db }, yes: { type: 'boolean', default: false } } });
  if (positionals.length !== 1) throw new UsageError('usage: brink restore <file> [--db PATH] [--yes]');
  const file = positionals[0]!;
  const check = await inspectBackup(file); // before asking: a bad backup is refused at once
  const what = `${file} (schema version ${check.schemaVersion}, integrity ok; ${check.species} species, ${check.chemicals} chemicals, ${check.plans} plans)`;
  if (existsSync(values.db)) {
    const ok = values.yes || (await confirm(`This replaces ${values.db} by the backup ${what}; the current file is kept beside it. Continue? [y/N] `));
    if (!ok) {
      io.err(values.yes || process.stdin.isTTY ? 'not restored\n' : 'refusing to restore without --yes (no terminal to ask)\n');
      return 2;
    }
  }
  const r = await restoreDatabase(file, values.db);
  io.out(
    `restored ${values.db} from ${what}` +
      (r.migrated.length > 0 ? `; migrated to schema version ${r.migrated[r.migrated.length - 1]} (${r.migrated.join(', ')})` : '') +
      (r.keptAs ? `; the previous database is kept as ${r.keptAs}` : '') +
      '\n' +
      (r.revocationsKept.length > 0 ? `kept revoked: ${r.revocationsKept.map((t) => `${t.prefix} (${t.holder})`).join(', ')} — revoked since the backup, so revoked in the restored database too\n` : '') +
      (r.tokensNotInBackup.length > 0 ? `not in the backup, so gone: tokens ${r.tokensNotInBackup.map((t) => `${t.prefix} (${t.holder})`).join(', ')} — create them again (brink token create)\n` : ''),
  );
  return 0;
}

/** How `brink screen` names the side of the boundary a window holds (its window.stateAbove says what follows). */
const PAST_WORD = { stationary: 'stationary', oscillatory: 'oscillatory', any: 'unstable', restore: 'stable' } as const;

function cmdSimulate(args: string[], io: Io): number {
  const usage = 'usage: brink simulate <mixture.json> [--dims 1|2] [--points N] [--duration T] [--out DIR] [--tolerance E] [--noise A] [--seed N] [--frames N] [--max-steps N] [--chemicals quasi-static|dynamic] [--repair global|local]';
  const { values, positionals } = parseArgs({
    args,
    allowPositionals: true,
    options: {
      dims: { type: 'string' },
      points: { type: 'string' },
      duration: { type: 'string' },
      out: { type: 'string' },
      tolerance: { type: 'string' },
      noise: { type: 'string' },
      seed: { type: 'string' },
      frames: { type: 'string' },
      'max-steps': { type: 'string' },
      chemicals: { type: 'string' },
      repair: { type: 'string' },
    },
  });
  if (positionals.length !== 1) throw new UsageError(usage);
  const chemicals = values.chemicals ?? 'quasi-static';
  if (chemicals !== 'quasi-static' && chemicals !== 'dynamic') throw new UsageError(`--chemicals: expected quasi-static or dynamic, got "${values.chemicals}"`);
  const repair = values.repair ?? 'global';
  if (repair !== 'global' && repair !== 'local') throw new UsageError(`--repair: expected global or local, got "${values.repair}"`);
  const dims = values.dims === undefined ? 1 : Number(values.dims);
  if (dims !== 1 && dims !== 2) throw new UsageError(`--dims: expected 1 or 2, got "${values.dims}"`);
  let duration: number | undefined;
  if (values.duration !== undefined) {
    const text = values.duration.trim();
    try {
      duration = /^[0-9.eE+-]+$/.test(text) ? Number(text) : parseQuantity(text, { dimension: DIMENSIONS.time, sign: 'positive' }, '--duration').value;
    } catch (e) {
      throw new UsageError(`--duration: ${(e as Error).message}`);
    }
    if (!(duration > 0 && Number.isFinite(duration))) throw new UsageError(`--duration: expected a positive time such as "20 min" or seconds, got "${values.duration}"`);
  }
  const mixture = parseMixture(readJson(positionals[0]!));
  const bar = io.errColumns ? progressBar(io.err, io.errColumns) : null;
  let result: ReturnType<typeof simulate>;
  try {
    result = simulate(mixture, {
      dims,
      ...(values.points !== undefined ? { points: numberFlag('points', values.points, true)! } : {}),
      ...(duration !== undefined ? { duration } : {}),
      ...(values.tolerance !== undefined ? { tolerance: numberFlag('tolerance', values.tolerance)! } : {}),
      ...(values.noise !== undefined ? { noise: numberFlag('noise', values.noise)! } : {}),
      ...(values.seed !== undefined ? { seed: numberFlag('seed', values.seed, true)! } : {}),
      ...(values.frames !== undefined ? { frames: numberFlag('frames', values.frames, true)! } : {}),
      ...(values['max-steps'] !== undefined ? { maxSteps: numberFlag('max-steps', values['max-steps'], true)! } : {}),
      chemicals,
      repair,
      ...(bar ? { progress: bar.update } : {}),
    });
  } finally {
    bar?.done();
  }
  if (values.out !== undefined) writeFrames(values.out, result);
  io.out(JSON.stringify(result.summary, null, 2) + '\n');
  return 0;
}

/** frames.json (what the binary holds) and frames.f32 (Float32 little-endian: frame, species, y, x with x fastest). */
function writeFrames(dir: string, result: ReturnType<typeof simulate>): void {
  const { frames, summary } = result;
  mkdirSync(dir, { recursive: true });
  const per = frames.data[0]?.length ?? 0;
  const buf = Buffer.alloc(4 * per * frames.data.length);
  frames.data.forEach((d, f) => {
    for (let i = 0; i < per; i++) buf.writeFloatLE(d[i]!, 4 * (f * per + i));
  });
  const header = {
    format: 'brink-frames/1',
    file: 'frames.f32',
    encoding: 'float32-le',
    layout: 'frame, species, y, x (x fastest); values are number densities in 1/m^3 at cell centres',
    dims: frames.dims,
    points: frames.points,
    species: frames.species,
    times: frames.times,
    length: summary.grid.length,
    cellSize: summary.grid.cellSize,
    walls: summary.grid.walls,
    fuelRunOut: summary.fuelRunOut,
  };
  writeFileSync(join(dir, 'frames.f32'), buf);
  writeFileSync(join(dir, 'frames.json'), JSON.stringify(header, null, 2) + '\n');
  writeFileSync(join(dir, 'summary.json'), JSON.stringify(summary, null, 2) + '\n');
}

function cmdScreen(args: string[], io: Io): number {
  const { values, positionals } = parseArgs({ args, allowPositionals: true, options: { format: { type: 'string', default: 'json' } } });
  if (positionals.length !== 1) throw new UsageError('usage: brink screen <request.json> [--format json|text]');
  if (values.format !== 'json' && values.format !== 'text') throw new UsageError(`--format: expected json or text, got "${values.format}"`);
  const { req, base, candidates } = parseScreenRequest(readJson(positionals[0]!));
  // a progress bar on a terminal only: pipes, files and tests see the same stderr as before
  const bar = io.errColumns ? progressBar(io.err, io.errColumns) : null;
  let results: ReturnType<typeof screen>;
  try {
    results = screen(base, candidates, {
      boundary: req.boundary,
      dosing: req.dosing,
      margin: req.margin,
      ...(req.maxDensity ? { maxDensity: req.maxDensity.value } : {}),
      ...(req.maxVolumeFraction !== undefined ? { maxVolumeFraction: req.maxVolumeFraction } : {}),
      ...(req.uncertainty ? { uncertainty: req.uncertainty } : {}),
      ...(bar ? { progress: bar.update } : {}),
    });
  } finally {
    bar?.done();
  }
  const out = screenOutput(results, screenWarnings(base, candidates));
  if (values.format === 'json') io.out(JSON.stringify(out, null, 2) + '\n');
  else {
    const lines = [`boundary: ${req.boundary} (${req.dosing}), candidates ranked by the smallest dose`];
    // what the input lacks and what the base itself warns of, first; then each candidate's own and, once, what its
    // sample at the margin dose warns of beyond these (a missing level is said once, per chemical)
    const said = (w: { code: string; message: string; chemical?: unknown }) => (w.code === 'no-concentration' ? `no-concentration:${String(w.chemical)}` : `${w.code}:${w.message}`);
    const top = new Set(out.warnings.map(said));
    for (const w of out.warnings) lines.push(`warning ${w.code}: ${benchText(w.message)}`);
    // an engine message's doses for its candidate: particles/mL, with µg/mL when its size and material density are given
    const ctxOf = (id: string): AmountContext => {
      const sp = candidates.find((x) => x.id === id);
      return sp ? { radius: sp.radius, materialDensity: sp.materialDensity ?? null } : {};
    };
    for (const c of out.candidates) {
      const say = (m: string) => benchText(m, ctxOf(c.species));
      if (!c.feasible) lines.push(`${String(c.rank).padStart(2)}. ${c.species}: cannot (${c.reason}) — ${say(c.message ?? '')}`);
      else {
        const q = (v: number | null | undefined) => (v === null || v === undefined ? 'above cap' : fmt(v, 'numberDensity'));
        const t = c.threshold!;
        const band = c.band
          ? ` [median ${q(c.band.median)}, 5–95 %: ${q(c.band.p05)} – ${q(c.band.p95)}; crosses by the cap in ${(100 * c.band.feasibleFraction).toFixed(1)} %, already past in ${(100 * c.band.alreadyPast).toFixed(1)} % of ${c.band.samples} draws]`
          : '';
        const at = c.atMargin ? `; at ${req.margin}× : ${c.atMargin.state}, growth ${c.atMargin.growthTime === null ? '—' : duration(c.atMargin.growthTime)}` : '';
        lines.push(`${String(c.rank).padStart(2)}. ${c.species}: ${t.anyDose ? 'any dose (0⁺)' : `${fmt(t.density, 'numberDensity')} (${fmt(t.volumeFraction, 'fraction')} by volume)`}${band}${c.window ? `, ${PAST_WORD[req.boundary]} up to ${fmt(c.window.upTo, 'numberDensity')}, ${c.window.stateAbove} above` : ''}${at}`);
      }
      // one precision for the whole path, enough that every interval's two ends read differently (a stretch just below the cap, say)
      let p = 3;
      while (p < 12 && c.dosePath.some((iv) => perMlCompact(iv.from, p) === perMlCompact(iv.to, p))) p++;
      if (c.dosePath.length > 0) lines.push(`    dose path (particles/mL): ${c.dosePath.map((iv) => `${iv.state} (${perMlCompact(iv.from, p)}, ${perMlCompact(iv.to, p)}]`).join(', ')}${c.firstOnset ? `; first onset ${c.firstOnset.state} at ${fmt(c.firstOnset.density, 'numberDensity')}` : ''}`);
      for (const w of c.warnings) lines.push(`    warning ${w.code}: ${say(w.message)}`);
      const seen = new Set(top);
      for (const w of c.atMargin?.warnings ?? []) {
        if (seen.has(said(w))) continue;
        seen.add(said(w));
        lines.push(`    at ${req.margin}× the threshold, warning ${w.code}: ${say(w.message)}`);
      }
    }
    io.out(lines.join('\n') + '\n');
  }
  return 0;
}

function cmdFit(args: string[], io: Io): number {
  const { values, positionals } = parseArgs({
    args,
    allowPositionals: true,
    options: {
      model: { type: 'string' },
      offset: { type: 'boolean', default: false },
      radius: { type: 'string' },
      temperature: { type: 'string' },
      particles: { type: 'string' },
      enzyme: { type: 'string' },
      tracks: { type: 'boolean' },
      'max-lag': { type: 'string' },
      lags: { type: 'string' },
      unweighted: { type: 'boolean', default: false },
      link: { type: 'string' },
      scale: { type: 'string' },
    },
  });
  const [method, file] = positionals;
  if (method === 'quantal' && positionals.length === 2) {
    const text = readText(file!);
    const data: unknown = /\.json$/i.test(file!) ? parseJson(text, file!) : text;
    const raw: Record<string, unknown> = {};
    if (values.link !== undefined) raw.link = values.link;
    if (values.scale !== undefined) raw.scale = values.scale;
    io.out(JSON.stringify(runQuantalFit(data, parseQuantalOptions(raw)), null, 2) + '\n');
    return 0;
  }
  if (positionals.length !== 2 || !FIT_METHODS.includes(method as FitMethod)) throw new UsageError('usage: brink fit <msd|kinetics|drift|quantal> <file.csv|file.json> [options]');
  const text = readText(file!);
  const data: unknown = /\.json$/i.test(file!) ? parseJson(text, file!) : text;
  const raw: Record<string, unknown> = {};
  if (method === 'msd') {
    if (values.model !== undefined) raw.model = values.model;
    if (values.offset) raw.offset = true;
    if (values.radius !== undefined) raw.radius = values.radius;
    if (values.temperature !== undefined) raw.temperature = values.temperature;
    if (values.tracks !== undefined) raw.tracks = values.tracks;
    if (values['max-lag'] !== undefined) raw.maxLag = values['max-lag'];
    if (values.lags !== undefined) raw.lags = Number(values.lags);
    if (values.unweighted) raw.weighting = 'unweighted';
  } else if (method === 'kinetics') {
    if (values.particles !== undefined) raw.particleDensity = values.particles;
    if (values.enzyme !== undefined) raw.enzymeConcentration = values.enzyme;
  }
  const m = method as FitMethod;
  const fit = runFit(m, data, parseFitOptions(m, raw));
  io.out(JSON.stringify(fit, null, 2) + '\n');
  return 0;
}

/** The sheet's options as `brink sheet` and `brink outcomes` take them (flags over an --options file). */
const SHEET_FLAGS = {
  candidate: { type: 'string' },
  'sample-volume': { type: 'string' },
  replicates: { type: 'string' },
  'min-volume': { type: 'string' },
  overage: { type: 'string' },
  buffer: { type: 'string' },
  options: { type: 'string' },
  doses: { type: 'string' },
  operator: { type: 'string' },
  'tube-volume': { type: 'string' },
  'chamber-volume': { type: 'string' },
  'closed-chamber': { type: 'boolean' },
} as const;

function sheetOptionsFrom(values: { [K in keyof typeof SHEET_FLAGS]?: (typeof SHEET_FLAGS)[K]['type'] extends 'boolean' ? boolean : string }): Record<string, unknown> {
  const opts: Record<string, unknown> = values.options ? (readJson(values.options) as Record<string, unknown>) : {};
  if (values.candidate) opts.candidate = values.candidate;
  if (values['sample-volume']) opts.sampleVolume = values['sample-volume'];
  if (values['min-volume']) opts.minVolume = values['min-volume'];
  if (values.replicates) opts.replicates = Number(values.replicates);
  if (values.overage) opts.overage = Number(values.overage);
  if (values.buffer) opts.buffer = values.buffer;
  if (values.doses !== undefined) opts.doses = splitDoses(values.doses);
  if (values.operator) opts.operator = values.operator;
  if (values['tube-volume']) opts.tubeVolume = values['tube-volume'];
  if (values['chamber-volume']) opts.chamberVolume = values['chamber-volume'];
  if (values['closed-chamber']) opts.closedChamber = true;
  return opts;
}

/**
 * `brink outcomes <plan-id>`: the current outcomes and their history; with a file (CSV: tube, state, onset [min],
 * length [um], notes; or JSON: the entry form or a filled-in sheet) records them as the next revision; with
 * --dose-response, the empirical threshold.
 */
function cmdOutcomes(args: string[], io: Io): number {
  const { values, positionals } = parseArgs({
    args,
    allowPositionals: true,
    options: {
      db: { type: 'string', default: defaults().db },
      ...SHEET_FLAGS,
      author: { type: 'string' },
      note: { type: 'string' },
      'base-revision': { type: 'string' },
      'dose-response': { type: 'boolean', default: false },
      revision: { type: 'string' },
      link: { type: 'string' },
      scale: { type: 'string' },
    },
  });
  const id = Number(positionals[0]);
  const usage = 'usage: brink outcomes <plan-id> [file.csv|file.json] [--db PATH] [--candidate ID] [sheet options] [--author NAME] [--note TEXT] [--base-revision N] | --dose-response [--link logit|probit|cloglog] [--scale log10|linear] [--revision N]';
  if (positionals.length < 1 || positionals.length > 2 || !Number.isInteger(id) || id < 1) throw new UsageError(usage);
  if (!existsSync(values.db)) throw new UsageError(`no database at ${values.db} (use --db PATH or BRINK_DB)`);
  const db = openDatabase(values.db);
  try {
    const plans = plansRepository(db);
    const outcomes = outcomesService(plans, sheetService(plans, shelfRepository(db), hazardsRepository(db)), outcomesRepository(db));
    if (values['dose-response']) {
      if (positionals.length !== 1) throw new UsageError(usage);
      const link = values.link ?? 'logit';
      const scale = values.scale ?? 'log10';
      if (!QUANTAL_LINKS.includes(link as QuantalLink)) throw new UsageError(`--link: expected logit, probit or cloglog, got "${link}"`);
      if (scale !== 'log10' && scale !== 'linear') throw new UsageError(`--scale: expected log10 or linear, got "${scale}"`);
      const revision = values.revision === undefined ? undefined : Number(values.revision);
      if (revision !== undefined && !(Number.isInteger(revision) && revision >= 1)) throw new UsageError(`--revision: expected a whole number ≥ 1, got "${values.revision}"`);
      io.out(JSON.stringify(outcomes.doseResponse(id, { link: link as QuantalLink, scale, ...(values.candidate ? { candidate: values.candidate } : {}), ...(revision !== undefined ? { revision } : {}) }), null, 2) + '\n');
      return 0;
    }
    if (positionals.length === 1) {
      io.out(JSON.stringify(outcomes.list(id, values.candidate), null, 2) + '\n');
      return 0;
    }
    const file = positionals[1]!;
    const base = values['base-revision'] === undefined ? undefined : Number(values['base-revision']);
    if (base !== undefined && !(Number.isInteger(base) && base >= 0)) throw new UsageError(`--base-revision: expected a whole number ≥ 0, got "${values['base-revision']}"`);
    const sheet = sheetOptionsFrom(values);
    const q = { ...(Object.keys(sheet).length > 0 ? { sheet } : {}), ...(values.author ? { author: values.author } : {}), ...(values.note ? { note: values.note } : {}), ...(base !== undefined ? { baseRevision: base } : {}) };
    const text = readText(file);
    const entry = /\.json$/i.test(file) ? readJsonEntry(parseJson(text, file), q) : readCsvEntry(text, q);
    io.out(JSON.stringify(outcomes.record(id, entry), null, 2) + '\n');
    return 0;
  } finally {
    db.close();
  }
}

function cmdSheet(args: string[], io: Io): number {
  const { values, positionals } = parseArgs({
    args,
    allowPositionals: true,
    options: {
      db: { type: 'string', default: defaults().db },
      format: { type: 'string', default: 'html' },
      paper: { type: 'string', default: 'A4' },
      out: { type: 'string' },
      ...SHEET_FLAGS,
    },
  });
  const id = Number(positionals[0]);
  if (positionals.length !== 1 || !Number.isInteger(id) || id < 1) throw new UsageError('usage: brink sheet <plan-id> [--db PATH] [--candidate ID] [--format html|md|json] …');
  const format = values.format;
  if (format !== 'html' && format !== 'md' && format !== 'json') throw new UsageError(`--format: expected html, md or json, got "${format}"`);
  if (values.paper !== 'A4' && values.paper !== 'Letter') throw new UsageError(`--paper: expected A4 or Letter, got "${values.paper}"`);
  if (!existsSync(values.db)) throw new UsageError(`no database at ${values.db} (use --db PATH or BRINK_DB)`);
  const opts = sheetOptionsFrom(values);
  const db = openDatabase(values.db);
  const write = (text: string) => {
    if (values.out) {
      writeFileSync(values.out, text);
      io.out(`wrote ${values.out}\n`);
    } else io.out(text);
  };
  try {
    const sheets = sheetService(plansRepository(db), shelfRepository(db), hazardsRepository(db));
    try {
      write(sheets.render(sheets.build(id, opts), format, values.paper));
    } catch (e) {
      if (!(e instanceof SheetNotFitError)) throw e;
      // the explanation, in the format asked for, and the refusal on stderr with exit 2
      write(sheets.render(e.sheet, format, values.paper));
      io.err(`cannot do that (${e.code}): ${e.message}\n${e.sheet.options.length ? `would fit: ${e.sheet.options.map((o) => o.text).join('; ')}\n` : ''}`);
      return 2;
    }
  } finally {
    db.close();
  }
  return 0;
}

// ------------------------------------------------------------------ plan, update, next: the bench loop in-process

/**
 * The services of the web service on a database file, in this process: the same plan, update and design code
 * as the jobs of `brink serve` (a worker thread computes; this thread stores), without the HTTP layer.
 */
function localServices(dbPath: string) {
  if (!existsSync(dbPath)) throw new UsageError(`no database at ${dbPath} (use --db PATH or BRINK_DB)`);
  const db = openDatabase(dbPath);
  const pool = new WorkerPool({ size: 1, nice: 0 });
  // a job's error is kept as it was thrown (rebuilt as its class when it crossed from the worker), for main's handler
  const jobs = new JobRegistry({ describeError: (e) => ({ statusCode: 500, error: 'thrown', message: e.message, thrown: e }) });
  const shelfRepo = shelfRepository(db);
  const shelf = shelfService(shelfRepo);
  const plansRepo = plansRepository(db);
  const plans = planService(shelf, plansRepo, { pool, jobs });
  const outcomeSets = outcomesRepository(db);
  const updates = outcomeUpdateService({ shelf, plans: plansRepo, readOutcomes: (id, candidate) => outcomeSets.current(id, candidate), rerun: (id, holder, series) => plans.rerun(id, holder, series), pool, jobs });
  return {
    plans,
    updates,
    jobs,
    /** What a species' amount is shown with (display.ts fmtAmountOf): its kind and molar mass from the shelf, its size and material density as the plan used them first. */
    amountContext(id: string, used?: { radius?: number | null; materialDensity?: number | null }): AmountContext {
      const rec = shelfRepo.get<{ kind?: string; molarMass?: { si: number }; radius?: { si: number }; materialDensity?: { si: number } }>('species', id)?.record;
      return { kind: rec?.kind ?? null, molarMass: rec?.molarMass?.si ?? null, radius: used?.radius ?? rec?.radius?.si ?? null, materialDensity: used?.materialDensity ?? rec?.materialDensity?.si ?? null };
    },
    async close() {
      jobs.close();
      await pool.close();
      db.close();
    },
  };
}

/** Wait for a job to end, drawing its progress on a terminal; a job that did not end done throws its error. */
async function awaitJob<R>(jobs: JobRegistry, job: Job<R>, io: Io): Promise<R> {
  const bar = io.errColumns ? progressBar(io.err, io.errColumns) : null;
  try {
    const ended = await new Promise<Job<R>>((resolve) => {
      if (ENDED_STATES.includes(job.state)) return resolve(job);
      const off = jobs.subscribe(job.id, (e) => {
        if (e.type === 'progress') bar?.update(e.job.progress.fraction, e.job.progress.stage);
        else {
          off();
          resolve(e.job as Job<R>);
        }
      });
    });
    if (ended.state === 'done' && ended.result !== null) return ended.result;
    const err = ended.error;
    if (err?.thrown instanceof Error) throw err.thrown;
    throw new Error(`the ${job.kind} job ended ${ended.state}${err ? `: ${err.message}` : ''}`);
  } finally {
    bar?.done();
  }
}

const planIdArg = (text: string | undefined, usage: string): number => {
  const id = Number(text);
  if (!Number.isInteger(id) || id < 1) throw new UsageError(usage);
  return id;
};

function numberFlag(name: string, text: string | undefined, integer = false): number | undefined {
  if (text === undefined) return undefined;
  const n = Number(text);
  if (text.trim() === '' || !Number.isFinite(n) || (integer && !Number.isInteger(n))) throw new UsageError(`--${name}: expected ${integer ? 'a whole number' : 'a number'}, got "${text}"`);
  return n;
}

/** The request body of an update or a next round from the command's flags: [flag, body key, whole number?] each. */
function bodyFromFlags(values: Record<string, unknown>, numeric: [string, string, boolean][], text: [string, string][] = []): Record<string, unknown> {
  const body: Record<string, unknown> = {};
  if (typeof values.candidate === 'string' && values.candidate !== '') body.candidate = values.candidate;
  for (const [flag, key, integer] of numeric) {
    const v = numberFlag(flag, values[flag] as string | undefined, integer);
    if (v !== undefined) body[key] = v;
  }
  for (const [flag, key] of text) if (values[flag] !== undefined) body[key] = values[flag];
  return body;
}

/** A band's 5 %, median and 95 % doses in the species' units (nM for an enzyme; display.ts fmtAmountOf). */
const bandText = (b: Band, c: AmountContext = {}) => [b.p05, b.median, b.p95].map((x) => (x === null ? 'above the cap' : fmtAmountOf(x, c))).join(' · ');
/** A coefficient with its sd in the unit people write it in (µm²/s, mM, fmol/s …); SI with its unit when display.ts has no kind for it. */
const withSdText = (v: number, sd: number, siUnit: string | undefined) => {
  const kind = siUnit === undefined ? null : kindOfSiUnit(siUnit.replace(/ /g, '*'));
  return kind === null ? `${g(v)} ± ${g(sd)} ${siUnit ?? ''}`.trimEnd() : fmtWithSd(v, sd, kind);
};

/** `brink plan <request.json>`: compute and store a plan, as POST /api/plans does. */
async function cmdPlan(args: string[], io: Io): Promise<number> {
  const { values, positionals } = parseArgs({ args, allowPositionals: true, options: { db: { type: 'string', default: defaults().db }, format: { type: 'string', default: 'text' } } });
  if (positionals.length !== 1) throw new UsageError('usage: brink plan <request.json> [--db PATH] [--format json|text]');
  if (values.format !== 'json' && values.format !== 'text') throw new UsageError(`--format: expected json or text, got "${values.format}"`);
  const request = readJson(positionals[0]!);
  const s = localServices(values.db);
  try {
    const { planId } = await awaitJob(s.jobs, s.plans.start(request), io);
    const plan = s.plans.get(planId) as { id: number; name: string; inputs: { candidates: { id: string; radius: number; materialDensity: number | null }[] }; result: { candidates: { species: string; feasible: boolean; threshold: { density: number } | null; band?: Band | null; message?: string }[]; warnings: { code: string; message: string }[] } };
    if (values.format === 'json') io.out(JSON.stringify({ planId, name: plan.name, candidates: plan.result.candidates.map((c) => ({ species: c.species, feasible: c.feasible, threshold: c.threshold?.density ?? null, band: c.band ?? null })), warnings: plan.result.warnings }, null, 2) + '\n');
    else {
      const lines = [`plan ${planId}: ${plan.name}`];
      for (const c of plan.result.candidates) {
        // the candidate's doses as the bench writes them: nM for an enzyme, particles/mL for a colloid (with µg/mL when the mass is known)
        const ctx = s.amountContext(c.species, plan.inputs.candidates.find((x) => x.id === c.species));
        const amount = (x: number | null) => (x === null ? 'above the cap' : fmtAmountOf(x, ctx));
        lines.push(
          c.feasible && c.threshold
            ? `  ${c.species}: threshold ${amount(c.threshold.density)}${c.band ? `; band 5 % · median · 95 %: ${amount(c.band.p05)} · ${amount(c.band.median)} · ${amount(c.band.p95)}` : ''}`
            : `  ${c.species}: does not cross${c.message ? ` (${benchText(c.message, ctx)})` : ''}`,
        );
      }
      for (const w of plan.result.warnings) lines.push(`  warning ${w.code}: ${benchText(w.message)}`);
      lines.push(`bench sheet: brink sheet ${planId} --db ${values.db} --format md`);
      io.out(lines.join('\n') + '\n');
    }
  } finally {
    await s.close();
  }
  return 0;
}

/** The update's answer in short: what `brink update` prints as JSON. */
function updateSummary(r: UpdateJobResult) {
  const u = r.update;
  return {
    planId: r.planId,
    outcomes: r.outcomes,
    ignored: r.ignored,
    priorFrom: r.priorFrom,
    method: u.method === 'importance' ? 'importance sampling' : 'sequential Monte Carlo',
    ess: Number(u.ess.toFixed(1)),
    importanceEss: Number(u.importanceEss.toFixed(1)),
    samples: u.samples,
    seed: u.seed,
    tubes: u.tubes,
    misclassification: u.options.misclassification,
    coefficients: u.coefficients.map((c) => ({ owner: c.owner, id: c.id, field: c.field, chemical: c.chemical, before: { value: c.value, sd: c.sd }, after: { value: c.posteriorMean, sd: c.posteriorSd }, unit: SI_UNIT[c.field] ?? 'SI' })),
    unaffected: (u.unaffected ?? []).map((c) => ({ owner: c.owner, id: c.id, field: c.field, chemical: c.chemical, value: c.value, sd: c.sd, unit: SI_UNIT[c.field] ?? 'SI', reason: c.reason })),
    bands: u.bands.map((b) => ({ species: b.species, unit: 'm^-3', before: b.prior, after: b.posterior })),
    consistency: u.consistency,
  };
}

/** The ignored tubes, one group per reason: "CFa, CFb, CFc (a no-fuel tube is …)". */
function ignoredText(ignored: UpdateJobResult['ignored']): string {
  const by = new Map<string, string[]>();
  for (const x of ignored) by.set(x.reason, [...(by.get(x.reason) ?? []), x.tube]);
  return [...by].map(([reason, tubes]) => `${tubes.join(', ')} (${reason})`).join('; ');
}

function updateText(r: UpdateJobResult, amountOf: (species: string) => AmountContext = () => ({})): string[] {
  const u = r.update;
  const lines = [
    `update of plan ${r.planId} from outcome set ${r.outcomes.id} revision ${r.outcomes.revision} (candidate ${r.outcomes.candidate}; ${u.tubes.used} tubes used, ${u.tubes.unclear} unclear${r.ignored.length ? `; ignored: ${ignoredText(r.ignored)}` : ''})`,
    `method: ${u.method === 'importance' ? `importance sampling over the plan's ${u.samples} draws` : `sequential Monte Carlo from ${u.samples} prior draws (importance sampling's ESS, ${u.importanceEss.toFixed(0)}, was below ${u.options.minEss})`}, effective sample size ${u.ess.toFixed(0)}; misclassification ε = ${u.options.misclassification}`,
    `consistency: ${u.consistency.consistent ? 'consistent' : 'INCONSISTENT'}: ${u.consistency.message}`,
    'coefficients: before (value ± sd) → after (posterior mean ± sd)',
    ...u.coefficients.map((c) => `  ${c.owner} ${c.id} ${c.field}${c.chemical ? ` on ${c.chemical}` : ''}: ${withSdText(c.value, c.sd, SI_UNIT[c.field])} → ${withSdText(c.posteriorMean, c.posteriorSd, SI_UNIT[c.field])}`),
    ...((u.unaffected ?? []).length ? ['not updated (the tubes cannot tell; the shelf value stands):', ...(u.unaffected ?? []).map((c) => `  ${c.owner} ${c.id} ${c.field}${c.chemical ? ` on ${c.chemical}` : ''}: ${c.reason}`)] : []),
    'threshold band (5 % · median · 95 %): before → after',
    ...u.bands.map((b) => `  ${b.species}: ${bandText(b.prior, amountOf(b.species))} → ${bandText(b.posterior, amountOf(b.species))}`),
  ];
  return lines;
}

/** `brink update <plan-id>`: the model update from the plan's current outcomes, and with --apply its revisions. */
async function cmdUpdate(args: string[], io: Io): Promise<number> {
  const usage = 'usage: brink update <plan-id> [--db PATH] [--candidate ID] [--samples N] [--misclassification E] [--seed N] [--apply] [--author NAME] [--format json|text]';
  const { values, positionals } = parseArgs({
    args,
    allowPositionals: true,
    options: {
      db: { type: 'string', default: defaults().db },
      candidate: { type: 'string' },
      samples: { type: 'string' },
      misclassification: { type: 'string' },
      seed: { type: 'string' },
      apply: { type: 'boolean', default: false },
      author: { type: 'string' },
      format: { type: 'string', default: 'json' },
    },
  });
  if (positionals.length !== 1) throw new UsageError(usage);
  const id = planIdArg(positionals[0], usage);
  if (values.format !== 'json' && values.format !== 'text') throw new UsageError(`--format: expected json or text, got "${values.format}"`);
  const body = bodyFromFlags(values, [
    ['samples', 'samples', true],
    ['misclassification', 'misclassification', false],
    ['seed', 'seed', true],
  ]);
  const s = localServices(values.db);
  try {
    const job = s.updates.startUpdate(id, body);
    const r = await awaitJob(s.jobs, job, io);
    let applied: ReturnType<typeof s.updates.apply> | null = null;
    let refused: string | null = null;
    if (values.apply) {
      try {
        applied = s.updates.apply(id, { job: job.id, ...(values.author ? { author: values.author } : {}) });
      } catch (e) {
        if (!(e instanceof DomainError)) throw e;
        refused = `${e.code}: ${e.message}`;
      }
    }
    if (values.format === 'json') io.out(JSON.stringify({ ...updateSummary(r), ...(values.apply ? { applied: applied ? applied.revisions : null, kept: applied ? applied.kept : null } : {}) }, null, 2) + '\n');
    else {
      const lines = updateText(r, (sid) => s.amountContext(sid));
      if (applied) {
        lines.push(`applied: ${applied.revisions.map((x) => `${x.type} ${x.key} (revision id ${x.revisionId})`).join(', ') || 'nothing'}`);
        if (applied.kept.length > 0) lines.push(`kept (barely informed by the outcomes, the shelf value stands): ${applied.kept.map((k) => `${k.type} ${k.key} ${k.field}${k.chemical ? ` on ${k.chemical}` : ''}`).join(', ')}`);
      }
      else if (!values.apply) lines.push(r.update.consistency.consistent ? `nothing written: add --apply to write these coefficients as new revisions` : 'nothing written: the outcomes are inconsistent with the model and the shelf, so the update cannot be applied');
      io.out(lines.join('\n') + '\n');
    }
    if (refused) {
      io.err(`not applied (${refused})\n`);
      return 2;
    }
  } finally {
    await s.close();
  }
  return 0;
}

/** `brink next <plan-id>`: design the next round's doses and store the next plan, as POST /api/plans/:id/next. */
async function cmdNext(args: string[], io: Io): Promise<number> {
  const usage = 'usage: brink next <plan-id> [--db PATH] [--candidate ID] [--tubes N] [--min-dose-ratio R] [--min-dose D] [--max-dose D] [--simulations N] [--format json|text]';
  const { values, positionals } = parseArgs({
    args,
    allowPositionals: true,
    options: {
      db: { type: 'string', default: defaults().db },
      candidate: { type: 'string' },
      tubes: { type: 'string' },
      'min-dose-ratio': { type: 'string' },
      'min-dose': { type: 'string' },
      'max-dose': { type: 'string' },
      simulations: { type: 'string' },
      samples: { type: 'string' },
      format: { type: 'string', default: 'text' },
    },
  });
  if (positionals.length !== 1) throw new UsageError(usage);
  const id = planIdArg(positionals[0], usage);
  if (values.format !== 'json' && values.format !== 'text') throw new UsageError(`--format: expected json or text, got "${values.format}"`);
  const body = bodyFromFlags(
    values,
    [
      ['tubes', 'tubes', true],
      ['min-dose-ratio', 'minDoseRatio', false],
      ['simulations', 'simulations', true],
      ['samples', 'samples', true],
    ],
    [
      ['min-dose', 'minDose'],
      ['max-dose', 'maxDose'],
    ],
  );
  const s = localServices(values.db);
  try {
    const r: NextJobResult = await awaitJob(s.jobs, s.updates.startNext(id, body), io);
    const d = r.design;
    if (values.format === 'json') {
      io.out(JSON.stringify({ planId: r.planId, nextPlanId: r.nextPlanId, candidate: d.candidate, criterion: d.criterion, method: d.method, designed: d.designed, fixed: d.fixed, current: d.current, grid: d.grid, difference: d.difference, truths: d.truths, simulations: d.simulations, particles: d.particles, shelf: r.shelf, sheet: r.sheet, update: { method: r.update.method, ess: r.update.ess, consistency: r.update.consistency } }, null, 2) + '\n');
    } else {
      const f = (x: number | null) => (x === null ? 'not finite (the band reaches past the cap)' : `×${g(x)}`);
      const lines = [
        `next plan ${r.nextPlanId} (after plan ${r.planId}): ${d.designed.doses.length} doses of ${d.candidate} designed to minimise the ${d.criterion}`,
        `  designed doses, particles/mL: ${d.designed.doses.map((x) => formatNumber(x * 1e-6, 3)).join(', ')}`,
        `  expected 5–95 % band width after the round: ${f(d.designed.expectedBandFactor)} (now ${f(d.current.bandFactor)})`,
        d.fixed ? `  default fixed series (${d.fixed.doses.length} doses: ${d.fixed.doses.map((x) => formatNumber(x * 1e-6, 3)).join(', ')} particles/mL): ${f(d.fixed.expectedBandFactor)}` : '  default fixed series: none (the posterior median is 0 or above the cap)',
        `  both scored on ${d.simulations} simulated rounds independent of those the doses were chosen on (same truths and misreadings for both)${d.difference ? `; expected variance of log10 threshold, designed − fixed: ${g(d.difference.variance)} ± ${g(d.difference.se)} (standard error)` : ''}`,
        `  dose grid, particles/mL: ${formatNumber(d.grid.from * 1e-6, 3)} to ${formatNumber(d.grid.to * 1e-6, 3)}${d.grid.ratio !== null ? ` by ×${d.grid.ratio}` : ''}; its lowest dose ${d.grid.lowest === 'minDose' ? 'given (--min-dose)' : d.grid.lowest === 'grid' ? 'from the grid given' : 'the posterior 5 % dose / 3 (the sheet dilutes serially and sets none; --min-dose gives your bench’s)'}`,
        `  update: ${r.update.method === 'importance' ? 'importance sampling' : 'sequential Monte Carlo'}, ESS ${r.update.ess.toFixed(0)}; ${r.update.consistency.consistent ? 'consistent' : `INCONSISTENT: ${r.update.consistency.message}`}`,
        `  ${r.shelf.note}`,
        `its sheet (the designed doses, plus the no-dopant control): brink sheet ${r.nextPlanId} --db ${values.db} --format md`,
      ];
      io.out(lines.join('\n') + '\n');
    }
  } finally {
    await s.close();
  }
  return 0;
}

/**
 * Run the command line with the given arguments (without `node` and the script).
 * @returns the exit status
 */
export async function main(argv: string[], io: Io = defaultIo): Promise<number> {
  const [cmd, ...rest] = argv;
  try {
    switch (cmd) {
      case 'analyze':
        return cmdAnalyze(rest, io);
      case 'fit':
        return cmdFit(rest, io);
      case 'sheet':
        return cmdSheet(rest, io);
      case 'outcomes':
        return cmdOutcomes(rest, io);
      case 'plan':
        return await cmdPlan(rest, io);
      case 'update':
        return await cmdUpdate(rest, io);
      case 'next':
        return await cmdNext(rest, io);
      case 'screen':
        return cmdScreen(rest, io);
      case 'simulate':
        return cmdSimulate(rest, io);
      case 'serve':
        return await cmdServe(rest);
      case 'seed':
        return await cmdSeed(rest, io);
      case 'backup':
        return await cmdBackup(rest, io);
      case 'restore':
        return await cmdRestore(rest, io);
      case 'token':
        return cmdToken(rest, io);
      case 'version':
      case '--version':
        io.out(`${VERSION}\n`);
        return 0;
      case undefined:
      case 'help':
      case '--help':
      case '-h':
        io.out(USAGE);
        return cmd === undefined ? 2 : 0;
      default:
        throw new UsageError(`unknown command "${cmd}"\n\n${USAGE}`);
    }
  } catch (e) {
    if (e instanceof MixtureFileError) {
      io.err(`invalid mixture:\n${e.problems.map((p) => `  ${p}`).join('\n')}\n`);
      return 2;
    }
    if (e instanceof UsageError || e instanceof EngineInputError || e instanceof DatabaseTooNewError || e instanceof BackupError || e instanceof ImportConflictError || e instanceof TokenError || (e instanceof Error && e.name === 'AccessRefusedError')) {
      io.err(`${e.message}\n`);
      return 2;
    }
    if (e instanceof InputError) {
      io.err(`invalid input:\n${e.problems.map((p) => `  ${p.path ? `${p.path}: ` : ''}${p.message}`).join('\n')}\n`);
      return 2;
    }
    if ((e as NodeJS.ErrnoException).code === 'EADDRINUSE') {
      io.err(`${(e as Error).message}: choose another --port\n`);
      return 2;
    }
    if (e instanceof NotFoundError || e instanceof StaleRevisionError) {
      io.err(`${e.message}\n`);
      return 2;
    }
    if (e instanceof DomainError) {
      io.err(`cannot do that (${e.code}): ${e.message}\n`);
      return 2;
    }
    if (e instanceof EngineDomainError) {
      io.err(`cannot analyse this mixture (${e.code}): ${e.message}\n`);
      return 2;
    }
    if (e instanceof Error && /^ERR_PARSE_ARGS_/.test(String((e as NodeJS.ErrnoException).code))) {
      io.err(`${e.message}\n`);
      return 2;
    }
    io.err(`internal error: ${(e as Error).message ?? String(e)}\n`);
    if (process.env.BRINK_DEBUG) io.err(`${(e as Error).stack}\n`);
    return 1;
  }
}
