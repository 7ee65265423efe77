/**
 * `npm run bench`: the workloads of issue 11, one JSON line each on stdout:
 *
 *   { "workload", "fast_s", "reference_s", "ratio", "max_rel_disagreement", "notes", ...extra fields }
 *
 *   analyses   10,000 seeded random 6-species 2-chemical analyses
 *   screen     200 candidates × 1,000 Monte Carlo draws against a stable 6-species 2-chemical base
 *   state-map  a 200 × 200 state map (base level × dose) of one candidate
 *   design     the next-experiment design against the default fixed series on the same simulated truths: tubes
 *              needed to bring the 5–95 % threshold band within a factor of 1.2 of the true threshold (bench/design.ts)
 *   simulate-1d  the nonlinear simulation (engine/simulate/) on 1,024 cells over ten growth times (target < 2 s)
 *   simulate-2d  the same mixture on 256 × 256 cells over five growth times (target < 60 s)
 *   service    the HTTP service on 127.0.0.1 while the screen runs as a plan job, under a bounded load
 *              on GET /api/species: latency p50/p99, requests/s, the main event loop's delay, peak RSS
 *
 * `fast_s` is the default code path on the whole workload; `reference_s` the
 * general path (each workload says in `notes` how it is forced); `ratio` is
 * reference_s / fast_s. A run that would take longer than its time budget runs
 * on a subset (the first candidates, draws or rows, never a sample chosen after
 * the fact) and is scaled by its share of the work; `notes` and the `*_subset`
 * fields say so. `max_rel_disagreement` compares the fast and general answers on
 * the same subset (|fast − reference| / |reference|, 0 when both are 0).
 * Figures, not checks: nothing is asserted. Progress goes to stderr.
 *
 *   npm run bench                        every workload
 *   npm run bench -- screen service      some of them
 *   BRINK_BENCH_BUDGET_S=40 npm run bench  seconds per measured run before it is cut to a subset (default 20)
 *   BRINK_BENCH_CONNECTIONS=8 npm run bench -- service   connections of the load (default 4)
 *
 * The inputs are invented and seeded (bench/inputs.ts). `npm run bench:engine`
 * keeps the older human-readable engine figures.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { Agent, request } from 'node:http';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { analyze, type AnalysisResult } from '../server/engine/analyze.js';
import { findDose, screen, stateMap, type CandidateResult, type ScreenOptions, type StateMap, type StateMapOptions } from '../server/engine/planner.js';
import { Random } from '../server/engine/random.js';
import type { ScanOptions } from '../server/engine/scan.js';
import type { Mixture, Species } from '../server/engine/types.js';
import { simulate } from '../server/engine/simulate/index.js';
import { benchDesign } from './design.js';
import { benchShelf, mixtureOf, randomMixture } from './inputs.js';

/**
 * How each workload forces the engine's general path: analyze's `earlyExit:
 * false` (scan.ts: every allowed mode's eigenvalues, no proven-bound skips),
 * and `fast: false` of the dose options (planner.ts: no rank-one determinant,
 * no Hurwitz search; stateMap: the general mode scan at every point). null
 * would mean no switch: the "reference" run is then the same code as the fast
 * one, and the notes say so.
 */
const FORCE_GENERAL: { analyze: ScanOptions | null; screen: Partial<ScreenOptions> | null; stateMap: Partial<StateMapOptions> | null } = {
  analyze: { earlyExit: false },
  screen: { fast: false },
  stateMap: { fast: false },
};

const BUDGET_S = Number(process.env.BRINK_BENCH_BUDGET_S ?? 20);
const SEED = 2026;
const WANT = new Set(process.argv.slice(2).filter((a) => !a.startsWith('-')));
const wanted = (w: string) => WANT.size === 0 || WANT.has(w);

const log = (text: string) => process.stderr.write(`bench: ${text}\n`);
const now = () => performance.now() / 1000;
const round = (x: number | null, digits = 4) => (x === null || !Number.isFinite(x) ? null : Number(x.toPrecision(digits)));
function line(o: { workload: string; fast_s: number | null; reference_s: number | null; max_rel_disagreement: number | null; notes: string; [extra: string]: unknown }) {
  const { workload, fast_s, reference_s, max_rel_disagreement, notes, ...extra } = o;
  const ratio = fast_s !== null && reference_s !== null && fast_s > 0 ? reference_s / fast_s : null;
  const out = { workload, fast_s: round(fast_s), reference_s: round(reference_s), ratio: round(ratio, 3), max_rel_disagreement: round(max_rel_disagreement, 3), notes, ...extra };
  process.stdout.write(`${JSON.stringify(out)}\n`);
}

/** |a − b| / |b|, 0 when both are 0; null when one side is missing or not finite. */
function rel(a: number | null | undefined, b: number | null | undefined): number | null {
  if (a == null || b == null) return a == null && b == null ? 0 : null;
  if (!Number.isFinite(a) || !Number.isFinite(b)) return a === b ? 0 : null;
  if (a === b) return 0;
  return Math.abs(a - b) / Math.max(Math.abs(b), Number.MIN_VALUE);
}
class MaxRel {
  value = 0;
  unmatched = 0;
  add(a: number | null | undefined, b: number | null | undefined) {
    const r = rel(a, b);
    if (r === null) this.unmatched++;
    else this.value = Math.max(this.value, r);
  }
}

/** Run items in order until the budget is spent (at least one): the seconds and how many ran. */
function budgeted<T>(items: T[], f: (x: T) => void, budgetS = BUDGET_S): { seconds: number; done: number } {
  const t0 = now();
  let done = 0;
  for (const x of items) {
    f(x);
    done++;
    if (now() - t0 > budgetS) break;
  }
  return { seconds: now() - t0, done };
}

// ------------------------------------------------------------------ (a) analyses

function benchAnalyses() {
  const N = 10_000;
  const rng = new Random(SEED);
  const mixes: Mixture[] = Array.from({ length: N }, () => randomMixture(rng));
  log(`analyses: ${N} random 6-species 2-chemical mixtures (sealed, 2 mm)`);
  const fastResults: AnalysisResult[] = [];
  const fast = budgeted(mixes, (m) => fastResults.push(analyze(m)));
  const refResults: AnalysisResult[] = [];
  const ref = budgeted(mixes, (m) => refResults.push(analyze(m, FORCE_GENERAL.analyze ?? {})), BUDGET_S / 2);
  const d = new MaxRel();
  let stateMismatch = 0;
  refResults.forEach((r, i) => {
    const f = fastResults[i];
    if (!f) return;
    if (f.state !== r.state) stateMismatch++;
    d.add(f.growthRate, r.growthRate);
    d.add(f.branches.stationary?.growthRate, r.branches.stationary?.growthRate);
    d.add(f.branches.oscillatory?.growthRate, r.branches.oscillatory?.growthRate);
  });
  const notes = [
    fast.done < N ? `fast ran ${fast.done} of ${N} analyses in the time budget, scaled to ${N}` : `fast ran all ${N}`,
    `reference ran the first ${ref.done}, scaled to ${N}`,
    FORCE_GENERAL.analyze
      ? `reference = analyze(mix, ${JSON.stringify(FORCE_GENERAL.analyze)}), the general eigen scan`
      : 'no switch to force the general eigen scan in this tree: analyze() is the general scan (ml-matrix eigenvalues on each allowed mode), so reference = the same code and the ratio is about 1',
    `disagreement: growth rate overall and per branch over the ${Math.min(ref.done, fast.done)} analyses run by both; ${stateMismatch} state mismatches, ${d.unmatched} branches present on one side only`,
  ];
  line({
    workload: 'analyses',
    fast_s: (fast.seconds * N) / fast.done,
    reference_s: (ref.seconds * N) / ref.done,
    max_rel_disagreement: d.value,
    notes: notes.join('; '),
    analyses: N,
    fast_subset: fast.done,
    reference_subset: ref.done,
    state_mismatches: stateMismatch,
  });
}

// ------------------------------------------------------------------ (b) screen

const CANDIDATES = 200;
const DRAWS = 1000;
const screenOptions = (samples: number): ScreenOptions => ({ boundary: 'stationary', dosing: 'add', uncertainty: { samples, seed: SEED } });

interface ScreenRun {
  seconds: number;
  /** seconds of each candidate, in order */
  each: number[];
  candidates: number;
  draws: number;
  results: CandidateResult[];
}

/** Screen the first `nc` candidates with `nd` draws, one candidate at a time (as screen() does), stopping at the budget. */
function runScreen(base: Mixture, cands: Species[], nc: number, nd: number, extra: Partial<ScreenOptions> = {}, budgetS = Infinity): ScreenRun {
  const results: CandidateResult[] = [];
  const each: number[] = [];
  const t = budgeted(cands.slice(0, nc), (c) => {
    const s = now();
    results.push(...screen(base, [c], { ...screenOptions(nd), ...extra }));
    each.push(now() - s);
  }, budgetS);
  return { seconds: t.seconds, each, candidates: t.done, draws: nd, results };
}

const sum = (xs: number[]) => xs.reduce((a, b) => a + b, 0);

interface ScreenMeasure {
  /** seconds for CANDIDATES × DRAWS: measured when `whole`, else extrapolated */
  seconds: number;
  whole: boolean;
  /** the run with draws (the whole one, or the subset the per-draw cost comes from) */
  band: ScreenRun;
  /** candidates of the nominal pass (no draws) and its seconds */
  nominal: { candidates: number; seconds: number };
}

/**
 * Time the screen workload within a budget. The nominal answers (no draws) of
 * the first candidates are timed first, then a pilot of one candidate with 10
 * draws. When one candidate with all DRAWS draws fits half the budget, the
 * candidates are run with all their draws, in order, until the budget is spent:
 * timed whole when all ran, else scaled by CANDIDATES / candidates run (the mean
 * over the first candidates). Otherwise the first few candidates run with fewer
 * draws, and the per-draw cost is that run's time less the same candidates'
 * nominal time: seconds = CANDIDATES × (mean nominal + DRAWS × per draw).
 */
function measureScreen(base: Mixture, cands: Species[], extra: Partial<ScreenOptions>, budgetS: number): ScreenMeasure {
  const nominal = runScreen(base, cands, CANDIDATES, 0, extra, budgetS / 4);
  const nominalOut = { candidates: nominal.candidates, seconds: nominal.seconds };
  const perCand = nominal.seconds / nominal.candidates;
  const pilot = runScreen(base, cands, 1, 10, extra);
  const perDrawPilot = Math.max(1e-6, (pilot.seconds - nominal.each[0]!) / 10);
  if (perCand + DRAWS * perDrawPilot <= budgetS / 2) {
    const band = runScreen(base, cands, CANDIDATES, DRAWS, extra, budgetS);
    const whole = band.candidates === CANDIDATES;
    return { seconds: whole ? band.seconds : (band.seconds * CANDIDATES) / band.candidates, whole, band, nominal: nominalOut };
  }
  const np = Math.min(3, nominal.candidates);
  const nd = Math.max(10, Math.min(DRAWS, Math.floor(budgetS / 2 / (np * perDrawPilot))));
  const band = runScreen(base, cands, np, nd, extra);
  const perDraw = Math.max(0, band.seconds - sum(nominal.each.slice(0, np))) / (np * nd);
  return { seconds: CANDIDATES * (perCand + DRAWS * perDraw), whole: false, band, nominal: nominalOut };
}

function compareScreens(fast: CandidateResult[], ref: CandidateResult[]) {
  const byId = new Map(fast.map((r) => [r.species, r]));
  const threshold = new MaxRel();
  const band = new MaxRel();
  let feasibility = 0;
  for (const r of ref) {
    const f = byId.get(r.species);
    if (!f) continue;
    if (f.feasible !== r.feasible) feasibility++;
    threshold.add(f.threshold?.density, r.threshold?.density);
    if (r.band || f.band) for (const k of ['median', 'p05', 'p95'] as const) band.add(f.band?.[k], r.band?.[k]);
  }
  return { threshold, band, feasibility };
}

let screenFast = null as ScreenMeasure | null;

const described = (m: ScreenMeasure) =>
  m.whole
    ? `all ${CANDIDATES} × ${DRAWS}, timed whole`
    : m.band.draws === DRAWS
      ? `the first ${m.band.candidates} candidates with all ${DRAWS} draws (${round(m.band.seconds, 3)} s, the time budget), scaled to ${CANDIDATES} by their mean (candidates taken in a seeded random order; they differ in cost by up to 1000×)`
      : `extrapolated from the nominal answers of the first ${m.nominal.candidates} candidates (seeded random order) (${round(m.nominal.seconds, 3)} s) and the first ${m.band.candidates} with ${m.band.draws} draws (${round(m.band.seconds, 3)} s): ${CANDIDATES} × (nominal + ${DRAWS} × per-draw cost)`;

/**
 * The candidates in a seeded random order, fixed for the whole run: a subset is
 * always a prefix of this order, so its mean cost estimates the whole's without
 * the bias of the shelf's own order (candidates differ in cost by 1000×).
 */
function shuffled<T>(xs: T[], seed: number): T[] {
  const rng = new Random(seed);
  const out = [...xs];
  for (let i = out.length - 1; i > 0; i--) {
    const j = Math.floor(rng.uniform() * (i + 1));
    [out[i], out[j]] = [out[j]!, out[i]!];
  }
  return out;
}

function benchScreen(base: Mixture, candidatesInShelfOrder: Species[]) {
  log(`screen: ${CANDIDATES} candidates × ${DRAWS} draws, stable 6-species 2-chemical base (sealed, 2 mm)`);
  const cands = shuffled(candidatesInShelfOrder, SEED);
  const fast = measureScreen(base, cands, {}, BUDGET_S * 2);
  screenFast = fast;
  log(`screen: fast ${described(fast)}`);
  const force = FORCE_GENERAL.screen ?? {};
  const ref = measureScreen(base, cands, force, BUDGET_S * 2);
  log(`screen: reference ${described(ref)}`);
  // the fast answers on the very same subset (same draws: the streams are seeded by draw index and species)
  const same = fast.band.draws === ref.band.draws && fast.band.candidates >= ref.band.candidates ? fast.band.results : runScreen(base, cands, ref.band.candidates, ref.band.draws).results;
  const cmp = compareScreens(same, ref.band.results);
  const feasible = fast.band.results.filter((r) => r.feasible).length;
  const methods: Record<string, number> = {};
  for (const r of fast.band.results) methods[String(r.method)] = (methods[String(r.method)] ?? 0) + 1;
  const notes = [
    `fast = screen() with the default options: ${described(fast)}`,
    FORCE_GENERAL.screen
      ? `reference = screen(..., ${JSON.stringify(FORCE_GENERAL.screen)}), the general path: ${described(ref)}`
      : `no switch to force the general path in this tree: reference = the same screen(), ${described(ref)}, so the ratio is about 1`,
    `disagreement over the reference's ${ref.band.candidates} candidates × ${ref.band.draws} draws: nominal thresholds ${round(cmp.threshold.value, 3)}, band median/p05/p95 ${round(cmp.band.value, 3)} (each draw is bisected to 1e-4 relative, so the bands need only agree to about that); ${cmp.feasibility} feasibility mismatches, ${cmp.threshold.unmatched + cmp.band.unmatched} numbers present on one side only`,
    `${feasible} of ${fast.band.candidates} candidates of the fast run feasible; boundary stationary, dosing add, seed ${SEED}`,
  ];
  line({
    workload: 'screen',
    fast_s: fast.seconds,
    reference_s: ref.seconds,
    max_rel_disagreement: Math.max(cmp.threshold.value, cmp.band.value),
    notes: notes.join('; '),
    candidates: CANDIDATES,
    draws: DRAWS,
    fast_measured: { whole: fast.whole, nominal_candidates: fast.nominal.candidates, nominal_s: round(fast.nominal.seconds), band_candidates: fast.band.candidates, band_draws: fast.band.draws, band_s: round(fast.band.seconds) },
    reference_measured: { whole: ref.whole, nominal_candidates: ref.nominal.candidates, nominal_s: round(ref.nominal.seconds), band_candidates: ref.band.candidates, band_draws: ref.band.draws, band_s: round(ref.band.seconds) },
    max_rel_disagreement_threshold: round(cmp.threshold.value, 3),
    max_rel_disagreement_band: round(cmp.band.value, 3),
    feasibility_mismatches: cmp.feasibility,
    fast_methods: methods,
    rss_mib: round(process.memoryUsage.rss() / 2 ** 20),
  });
}

// ------------------------------------------------------------------ (c) state map

const ROWS = 200;
const COLS = 200;
const BASE_RANGE: [number, number] = [0.1, 10];

/** The first `rows` rows of the ROWS × COLS map: the same base factors, from a shorter base range. */
function mapRows(base: Mixture, d: Species, rows: number, extra: Partial<StateMapOptions> = {}): { map: StateMap; seconds: number } {
  const [b0, b1] = BASE_RANGE;
  const top = rows >= ROWS ? b1 : b0 * Math.pow(b1 / b0, (rows - 1) / (ROWS - 1));
  const t0 = now();
  const map = stateMap(base, d, { boundary: 'stationary', dosing: 'add', baseRange: [b0, top], baseSteps: rows, doseSteps: COLS, ...extra });
  return { map, seconds: now() - t0 };
}

function compareMaps(fast: StateMap, ref: StateMap) {
  let cells = 0;
  let mismatched = 0;
  ref.states.forEach((row, i) => row.forEach((s, j) => {
    cells++;
    if (fast.states[i]?.[j] !== s) mismatched++;
  }));
  // boundary points matched by transition and base factor
  const points = (m: StateMap) => {
    const out = new Map<string, number>();
    for (const b of m.boundaries) for (const [f, x] of b.points) out.set(`${b.from}→${b.to}@${f.toPrecision(12)}`, x);
    return out;
  };
  const fp = points(fast);
  const d = new MaxRel();
  for (const [k, x] of points(ref)) d.add(fp.get(k), x);
  return { cells, mismatched, d };
}

function benchStateMap(base: Mixture, cands: Species[]) {
  const d = cands.find((c) => findDose(base, c, { boundary: 'stationary', dosing: 'add' }).feasible) ?? cands[0]!;
  log(`state-map: ${ROWS} × ${COLS} for ${d.id}`);
  const pilot = mapRows(base, d, 3);
  const cols = pilot.map.doseAxis.length;
  const perRow = pilot.seconds / 3;
  const rows = Math.min(ROWS, Math.max(3, Math.floor(BUDGET_S / perRow)));
  const fast = rows === 3 ? pilot : mapRows(base, d, rows);
  const gotRows = fast.map.baseAxis.factor.length;
  const fastS = (fast.seconds * ROWS * COLS) / (gotRows * cols);
  const force = FORCE_GENERAL.stateMap ?? {};
  const refPilot = mapRows(base, d, 3, force);
  const refRows = Math.min(gotRows, Math.max(3, Math.floor(BUDGET_S / (refPilot.seconds / 3))));
  const ref = refRows === 3 ? refPilot : mapRows(base, d, refRows, force);
  const refGot = ref.map.baseAxis.factor.length;
  const refS = (ref.seconds * ROWS * COLS) / (refGot * ref.map.doseAxis.length);
  const same = refGot <= gotRows && cols === ref.map.doseAxis.length ? mapRows(base, d, refGot).map : fast.map;
  const cmp = compareMaps(same, ref.map);
  const capped = cols < COLS;
  const notes = [
    capped ? `stateMap caps each axis at ${cols} in this tree, so the map ran ${gotRows} × ${cols} and is scaled by cells to ${ROWS} × ${COLS}` : gotRows < ROWS ? `fast ran the first ${gotRows} of ${ROWS} rows in the budget, scaled by cells` : `fast ran all ${ROWS} × ${COLS}`,
    FORCE_GENERAL.stateMap
      ? `reference = stateMap(..., ${JSON.stringify(FORCE_GENERAL.stateMap)}) on the first ${refGot} rows, scaled by cells`
      : `no switch to force the general state evaluator in this tree: reference = the same stateMap() on the first ${refGot} rows, scaled by cells, so the ratio is about 1`,
    `disagreement: boundary doses matched by row and transition (${cmp.d.unmatched} unmatched); ${cmp.mismatched} of ${cmp.cells} cells differ in state; candidate ${d.id}, base factor ${BASE_RANGE.join('–')}, doses cap × 1e-3 to the cap`,
  ];
  line({
    workload: 'state-map',
    fast_s: fastS,
    reference_s: refS,
    max_rel_disagreement: cmp.d.value,
    notes: notes.join('; '),
    grid: [ROWS, COLS],
    fast_subset: { rows: gotRows, cols, seconds: round(fast.seconds) },
    reference_subset: { rows: refGot, cols: ref.map.doseAxis.length, seconds: round(ref.seconds) },
    cell_mismatches: cmp.mismatched,
  });
}

// ------------------------------------------------------------------ (d) service

const CONNECTIONS = Number(process.env.BRINK_BENCH_CONNECTIONS ?? 4);
const LOAD_LIMIT_S = 120;

function startService(shelfFile: string): Promise<{ child: ChildProcess; url: string; from: string; ask: (m: { type: string }) => Promise<Record<string, unknown>> }> {
  const child = spawn(process.execPath, ['--import', 'tsx', new URL('./service.ts', import.meta.url).pathname, shelfFile], { stdio: ['ignore', 'inherit', 'inherit', 'ipc'] });
  return new Promise((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error('the bench service did not start within 60 s')), 60_000);
    child.once('exit', (code) => reject(new Error(`the bench service exited (${code}) before listening`)));
    child.once('message', (m: { type: string; url: string; from: string }) => {
      clearTimeout(timer);
      const ask = (q: { type: string }) =>
        new Promise<Record<string, unknown>>((res) => {
          child.once('message', (a: Record<string, unknown>) => res(a));
          child.send(q);
        });
      resolve({ child, url: m.url, from: m.from, ask });
    });
  });
}

function call(agent: Agent, url: string, method = 'GET', body?: unknown): Promise<{ status: number; text: string }> {
  return new Promise((resolve, reject) => {
    const data = body === undefined ? undefined : JSON.stringify(body);
    const req = request(url, { method, agent, headers: data ? { 'content-type': 'application/json', 'content-length': Buffer.byteLength(data) } : {} }, (res) => {
      let text = '';
      res.setEncoding('utf8');
      res.on('data', (c: string) => (text += c));
      res.on('end', () => resolve({ status: res.statusCode ?? 0, text }));
    });
    req.on('error', reject);
    req.end(data);
  });
}

/** A bounded closed-loop load: CONNECTIONS keep-alive connections, each sending its next GET when the last one answered, until stop() or the limit. */
function load(url: string) {
  const agent = new Agent({ keepAlive: true, maxSockets: CONNECTIONS });
  const times: number[] = [];
  let errors = 0;
  let stopped = false;
  const t0 = now();
  const loops = Array.from({ length: CONNECTIONS }, async () => {
    while (!stopped && now() - t0 < LOAD_LIMIT_S) {
      const s = performance.now();
      try {
        const r = await call(agent, `${url}/api/species`);
        if (r.status !== 200) errors++;
      } catch {
        errors++;
      }
      times.push(performance.now() - s);
    }
  });
  return {
    async stop() {
      stopped = true;
      await Promise.all(loops);
      agent.destroy();
      const seconds = now() - t0;
      times.sort((a, b) => a - b);
      const q = (p: number) => (times.length ? times[Math.min(times.length - 1, Math.floor(p * times.length))]! : null);
      return { requests: times.length, errors, seconds, rps: times.length / seconds, p50_ms: q(0.5), p99_ms: q(0.99), max_ms: times.length ? times[times.length - 1]! : null, hitLimit: seconds >= LOAD_LIMIT_S };
    },
  };
}

async function benchService(shelf: ReturnType<typeof benchShelf>, inProcess: CandidateResult[] | null) {
  // the plan is the screen workload when the fast screen ran it whole within the budget, else a subset sized to about 15 s
  let nc = CANDIDATES;
  let nd = DRAWS;
  // the screen workload's own timing (or, when it did not run, a short one) sizes the plan to about 30 s when the whole would be longer
  const timing = screenFast ?? measureScreen(base, shuffled(candidates, SEED), {}, 10);
  if (timing.seconds > 30) {
    nc = Math.max(1, Math.min(CANDIDATES, Math.round((CANDIDATES * 30) / timing.seconds)));
    nd = DRAWS;
  }
  log(`service: plan of ${nc} candidates × ${nd} draws as a job, load of ${CONNECTIONS} connections on GET /api/species`);
  const dir = mkdtempSync(join(tmpdir(), 'brink-bench-shelf-'));
  const shelfFile = join(dir, 'bench-shelf.json');
  writeFileSync(shelfFile, JSON.stringify(shelf.document));
  const svc = await startService(shelfFile);
  const agent = new Agent({ keepAlive: true });
  try {
    // warm up (the first requests compile the route's serializers), then an idle baseline: 2 s of the same load before the plan
    for (let i = 0; i < 50; i++) await call(agent, `${svc.url}/api/species`);
    await svc.ask({ type: 'reset' });
    const idle = load(svc.url);
    await new Promise((r) => setTimeout(r, 2000));
    const idleLoad = await idle.stop();
    const idleStats = await svc.ask({ type: 'report' });

    await svc.ask({ type: 'reset' });
    const busy = load(svc.url);
    const t0 = now();
    // the same seeded order as the screen workload's, so a part of it is the part the screen timed
    const ids = shuffled(shelf.candidates, SEED).slice(0, nc);
    const body = { name: 'benchmark screen (invented shelf)', base: shelf.sample.species, chemicals: shelf.sample.chemicals, chamber: shelf.sample.chamber, boundary: 'stationary', dosing: 'add', candidates: ids, uncertainty: { samples: nd, seed: SEED } };
    const posted = await call(agent, `${svc.url}/api/plans`, 'POST', body);
    let planId: number | null = null;
    let jobState = posted.status === 201 ? 'done (synchronous 201)' : `answered ${posted.status}`;
    const stages = new Set<string>();
    if (posted.status === 202) {
      let job = JSON.parse(posted.text) as { id: string | number; state: string; progress?: { fraction: number; stage: string }; result?: { planId: number } };
      while (!['done', 'failed', 'cancelled', 'timed-out'].includes(job.state) && now() - t0 < LOAD_LIMIT_S) {
        await new Promise((r) => setTimeout(r, 100));
        job = JSON.parse((await call(agent, `${svc.url}/api/jobs/${job.id}`)).text);
        if (job.progress) stages.add(job.progress.fraction.toFixed(2));
      }
      jobState = job.state;
      planId = job.result?.planId ?? null;
    } else if (posted.status === 201) planId = (JSON.parse(posted.text) as { id: number }).id;
    const jobS = now() - t0;
    const busyLoad = await busy.stop();
    const busyStats = await svc.ask({ type: 'report' });

    let disagreement: number | null = null;
    let compared = 'not compared';
    if (planId !== null && inProcess && screenFast && screenFast.band.draws === nd && screenFast.band.candidates >= nc) {
      const plan = JSON.parse((await call(agent, `${svc.url}/api/plans/${planId}`)).text) as { result?: { candidates: CandidateResult[] } };
      const cmp = compareScreens(plan.result?.candidates ?? [], inProcess.filter((r) => ids.includes(r.species)));
      disagreement = Math.max(cmp.threshold.value, cmp.band.value);
      compared = `thresholds and band quantiles of the stored plan against the in-process screen of the same ${nc} × ${nd}: ${cmp.threshold.unmatched + cmp.band.unmatched} unmatched, ${cmp.feasibility} feasibility mismatches`;
    }
    const eld = busyStats.eventLoopDelay as Record<string, number>;
    const notes = [
      nc === CANDIDATES && nd === DRAWS ? `the plan is the screen workload (${nc} × ${nd})` : `the plan is ${nc} candidates × ${nd} draws of the screen workload (the first of its seeded order, sized to about 30 s from the screen's timing)`,
      `POST /api/plans ${jobState === 'done (synchronous 201)' ? 'answered 201 after computing the plan on the request (no job in this tree): the load waited for it' : `answered ${posted.status}; job ended ${jobState}`}`,
      `load: ${CONNECTIONS} keep-alive connections on GET /api/species (a page of 50), closed loop (each sends when answered, so a stall delays requests instead of piling them up: read p99 beside the event-loop delay), ${busyLoad.hitLimit ? `stopped at its ${LOAD_LIMIT_S} s limit` : 'stopped when the job ended'}`,
      `event-loop delay and RSS measured inside the service process (workers included in RSS), over the plan's run; service ${svc.from === 'dist' ? 'from the compiled dist/ (as npm start runs it)' : 'from the TypeScript sources under tsx (dist/ missing or older than a source: npm run build)'}`,
      compared,
    ];
    line({
      workload: 'service',
      fast_s: jobS,
      reference_s: null,
      max_rel_disagreement: disagreement,
      notes: notes.join('; '),
      plan: { candidates: nc, draws: nd, http_status: posted.status, job_state: jobState, progress_values_seen: stages.size },
      p50_ms: round(busyLoad.p50_ms),
      p99_ms: round(busyLoad.p99_ms),
      max_ms: round(busyLoad.max_ms),
      requests_per_s: round(busyLoad.rps),
      requests: busyLoad.requests,
      errors: busyLoad.errors,
      event_loop_delay_ms: { p50: round(eld.p50_ms!), p99: round(eld.p99_ms!), max: round(eld.max_ms!) },
      rss_peak_mib: round(busyStats.rssPeakMiB as number),
      idle: { p50_ms: round(idleLoad.p50_ms), p99_ms: round(idleLoad.p99_ms), requests_per_s: round(idleLoad.rps), event_loop_delay_p99_ms: round((idleStats.eventLoopDelay as Record<string, number>).p99_ms!), rss_mib: round(idleStats.rssPeakMiB as number) },
    });
  } finally {
    agent.destroy();
    const exited = new Promise((r) => svc.child.once('exit', r));
    svc.child.disconnect();
    await exited;
    rmSync(dir, { recursive: true, force: true });
  }
}

// ------------------------------------------------------------------ main

const t0 = now();
if (wanted('analyses')) benchAnalyses();
const shelf = benchShelf();
const { mixture: base, candidates } = mixtureOf(shelf.document, shelf.sample, shelf.candidates);
if (wanted('screen')) benchScreen(base, candidates);
if (wanted('state-map')) benchStateMap(base, candidates);
if (wanted('service')) await benchService(shelf, screenFast?.band.results ?? null);
if (wanted('design')) {
  const truths = Number(process.env.BRINK_BENCH_DESIGN_TRUTHS ?? 40);
  const t = now();
  const simulations = Number(process.env.BRINK_BENCH_DESIGN_SIMULATIONS ?? 200);
  const b = benchDesign(truths, log, 6, 400, simulations);
  line({
    workload: 'design',
    fast_s: now() - t,
    reference_s: null,
    max_rel_disagreement: null,
    notes: `${truths} simulated truths drawn from the prior (bench/design.ts), design over ${simulations} simulated rounds, rounds of ${b.tubesPerRound} tubes (ε = 0.05 misreadings), at most ${b.rounds} rounds; tubes needed until the 5–95 % band lies within a factor of 1.2 of the true threshold, designed (expected posterior variance of log10 threshold) vs the default fixed series; mean over the truths each strategy reached; fast_s is the whole workload, there is no reference path`,
    tubes_designed: round(b.designed.meanTubes),
    tubes_fixed: round(b.fixed.meanTubes),
    reached_designed: b.designed.reached,
    reached_fixed: b.fixed.reached,
    both_reached: b.both.truths,
    tubes_designed_both: round(b.both.designed),
    tubes_fixed_both: round(b.both.fixed),
    designed_fewer: b.both.designedFewer,
    fixed_fewer: b.both.fixedFewer,
    band_factor_by_round_designed: b.designed.bandFactorByRound,
    band_factor_by_round_fixed: b.fixed.bandFactorByRound,
    seconds_designed: round(b.designed.seconds),
    seconds_fixed: round(b.fixed.seconds),
  });
}
// ------------------------------------------------------------------ simulation past onset
/**
 * One invented mixture (Tarn Street bench style): 1 µm beads at 5 % volume fraction that make a screened
 * chemical and climb its gradient, in a 1 mm periodic chamber (fastest mode n = 4; the convergence test's case).
 * Each run is timed whole (never cut to a subset); `max_rel_disagreement` is the measured early growth rate
 * against analyze()'s, `reference_s` is null (there is no second path).
 */
function benchSimulate(dims: 1 | 2) {
  const rho = 0.05 / ((4 / 3) * Math.PI * 1e-18);
  const mix: Mixture = {
    chemicals: [{ id: 'c', diffusivity: 1e-9, lossRate: 0.05, concentration: 50, solubility: null }],
    species: [{ id: 'bead', diffusivity: 2e-13, radius: 1e-6, density: rho, materialDensity: null, couplings: [{ chemical: 'c', activity: { kind: 'constant', rate: 1e-16 }, mobility: -1e-12 }] }],
    chamber: { walls: 'periodic', length: 1e-3, depth: null },
    crowding: false,
    conditions: { temperature: 298.15, solventDensity: 997.05, duration: null, fieldOfView: null },
  };
  const a = analyze(mix);
  const growthTimes = dims === 1 ? 10 : 5;
  const points = dims === 1 ? 1024 : 256;
  log(`simulate ${dims}D: ${points}${dims === 2 ? ` × ${points}` : ''} cells over ${growthTimes} growth times`);
  const t = now();
  const r = simulate(mix, { dims, points, duration: growthTimes / a.growthRate });
  const seconds = now() - t;
  line({
    workload: `simulate-${dims}d`,
    fast_s: seconds,
    reference_s: null,
    max_rel_disagreement: rel(r.summary.measured.growthRate, a.growthRate),
    notes: `${points}${dims === 2 ? `×${points}` : ''} cells, periodic 1 mm, ${growthTimes} growth times (${(growthTimes / a.growthRate).toFixed(0)} s simulated); target < ${dims === 1 ? 2 : 60} s; disagreement = measured early growth rate vs analyze()`,
    steps: r.summary.run.steps,
    rejected: r.summary.run.rejected,
    conservation: r.summary.conservation.maxRelativeError,
    clusters: r.summary.clusters.count,
  });
}
if (wanted('simulate-1d')) benchSimulate(1);
if (wanted('simulate-2d')) benchSimulate(2);

log(`done in ${(now() - t0).toFixed(0)} s`);
