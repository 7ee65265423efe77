/**
 * Property-based fuzzing of every endpoint (fast-check, fixed seeds so a failure reproduces):
 * generated and hostile bodies (mutations of a valid body of each route: deep nesting, huge arrays,
 * long strings, wrong types, __proto__ / constructor keys, NaN- and Infinity-like strings, odd unit
 * strings, odd content types), query strings and path parameters, against an app on an in-memory
 * database with the demo shelf.
 *
 * Asserted for every response: no 5xx; an x-request-id header; every 4xx is JSON with `error` and a
 * `message` (a 400 `invalid-input` lists its problems, each with a `path` and a `message`); no stack
 * trace or SQL in any body. After every rejected write the shelf is unchanged (the export, the hazard
 * and measurement tables, the names and notes of the stored plans).
 *
 * The routes are the app's own (app.routeTable): a route this file does not know fails the first
 * test, so a new route cannot be left out. `npm run fuzz` runs this file alone and prints the figures
 * (requests fuzzed, 5xx seen).
 */
import fc from 'fast-check';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildApp, type App } from '../../server/http/app.js';
import { LIMITS } from '../../server/schema/limits.js';
import { seedDemoShelf } from '../../server/shelf/seed.js';
import { openDatabase } from '../../server/store/db.js';
import { DIMENSIONS, parseQuantity, UnitError, type Dimension } from '../../server/units/index.js';
import { chemicalRecord, speciesRecord } from '../helpers/app.js';

/** Fixed seeds: a failure prints its seed and path, and the same run reproduces it. */
const SEED = 1212;
/** Runs per body route, of the generic hostile bodies, and of query strings and parameters. */
const RUNS = { perRoute: 100, generic: 800, query: 1200, units: 3000 };

const msdCsv = 'lag [s],msd [um^2]\n0.1,0.092\n0.2,0.175\n0.5,0.44\n1,0.90\n2,1.77\n5,4.41\n';
const hazardSet = {
  source: 'invented test data',
  forms: ['suspension'],
  bands: [{ min: 0, max: null, statement: 'H317', text: 'May cause an allergic skin reaction.', hazardClass: 'Skin Sens. 1', pictograms: ['GHS07'], signal: 'Warning', precautionary: ['P280 Wear protective gloves.'], forms: ['suspension'] }],
};
const sample = {
  species: [{ id: 'ptj-1um-b09', volumeFraction: '0.1 percent' }],
  chemicals: { h2o2: '200 mM' },
  chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' },
};
const mixtureFile = {
  chemicals: [{ id: 'fuel', diffusivity: '1.4e-9 m^2/s', concentration: '10 mM' }],
  species: [{ id: 'bead', diffusivity: '0.22 um^2/s', radius: '1 um', volumeFraction: '0.5 percent', couplings: [{ chemical: 'fuel', activity: '-2e-16 mol/s', mobility: '-50 um^2/(s*mM)' }] }],
  chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' },
  crowding: true,
};

type Body = (() => unknown) | null;
interface RouteCase {
  /** a valid body (mutated by the fuzzer), or null: the route takes none */
  body: Body;
  /** valid values of the path parameters (the fuzzer also sends hostile ones) */
  params?: Record<string, string[]>;
  /** the query keys the route reads (the fuzzer also sends unknown ones) */
  query?: string[];
}

const ids = { chemical: ['h2o2', 'glucose'], species: ['ptj-1um-b07', 'gox-e1'] };
const listQuery = ['q', 'kind', 'includeRetired', 'limit', 'offset'];
const sheetQuery = ['format', 'paper', 'notFitStatus', 'candidate', 'sampleVolume', 'replicates', 'minVolume', 'overage', 'buffer', 'doses', 'operator', 'tubeVolume', 'chamberVolume', 'closedChamber'];

/** Every route of the app, by `METHOD url`, with what the fuzzer needs to reach it. */
function routeCases(plan: string, measurement: string, job: string): Record<string, RouteCase> {
  const out: Record<string, RouteCase> = {
    'GET /api/health': { body: null },
    'GET /api/schema/mixture': { body: null },
    'GET /': { body: null },
    'GET /shelf': { body: null },
    'GET /shelf/new': { body: null },
    'GET /shelf/species/:id': { params: { id: ids.species }, body: null },
    'GET /shelf/chemicals/:id': { params: { id: ids.chemical }, body: null },
    'GET /planner': { body: null },
    'GET /calibrate': { body: null },
    'GET /plans/:id': { params: { id: [plan] }, body: null },
    'GET /plans/:id/sheet': { params: { id: [plan] }, body: null },
    'GET /plans/:id/outcomes': { params: { id: [plan] }, body: null },
    'GET /assets/:file': { params: { file: ['none.js'] }, body: null },
    'GET /favicon.svg': { body: null },
    'GET /favicon.ico': { body: null },
    'POST /api/units/read': { body: () => ({ value: { value: '0.22 um^2/s', sd: '0.02 um^2/s' }, quantity: 'diffusivity', sign: 'positive' }) },
    'GET /api/shelf/export': { body: null },
    'POST /api/shelf/import': { body: () => ({ format: 'brink-shelf', version: 1, chemicals: [chemicalRecord('fz-import')], species: [] }), query: ['author'] },
    'POST /api/analyze': { body: () => sample },
    'POST /api/analyze/mixture': { body: () => mixtureFile },
    // with a dose series of its own (the field a next plan stores its designed doses in), so that it is fuzzed too
    'POST /api/plans': { body: () => ({ ...sample, base: sample.species, species: undefined, boundary: 'stationary', candidates: ['ptj-1um-b07'], series: { candidate: 'ptj-1um-b07', doses: ['1e8 1/mL', '2e8 1/mL'] } }) },
    'GET /api/plans': { body: null, query: ['limit', 'offset'] },
    'GET /api/plans/:id': { body: null, params: { id: [plan] } },
    'PATCH /api/plans/:id': { body: () => ({ baseRevision: 1, name: 'fuzzed name', notes: 'fuzzed notes' }), params: { id: [plan] } },
    'POST /api/plans/:id/rerun': { body: () => ({}), params: { id: [plan] } },
    'POST /api/plans/:id/candidates/:species/spectrum': { body: () => ({ dose: '1e8 1/mL', points: 40 }), params: { id: [plan], species: ['ptj-1um-b07', 'gox-e1'] } },
    'POST /api/plans/:id/candidates/:species/simulate': { body: () => ({ doses: ['1e8 1/mL'], dims: 1, points: 32, growthTimes: 2, seed: 3, chemicals: 'dynamic' }), params: { id: [plan], species: ['ptj-1um-b07', 'gox-e1'] } },
    'GET /plans/:id/forms': { params: { id: [plan] }, body: null },
    'POST /api/plans/:id/outcomes': { body: () => ({ tubes: [{ tube: 'C0a', state: 'stable', onsetTime: '12 min', patternLength: '0.4 mm', notes: 'n' }] }), params: { id: [plan] }, query: ['author', 'note', 'baseRevision', 'candidate', 'replicates'] },
    'GET /api/plans/:id/outcomes': { body: null, params: { id: [plan] }, query: ['candidate'] },
    'GET /api/plans/:id/outcomes/dose-response': { body: null, params: { id: [plan] }, query: ['candidate', 'revision', 'link', 'scale'] },
    'POST /api/plans/:id/update': { body: () => ({ samples: 50 }), params: { id: [plan] } },
    'POST /api/plans/:id/update/apply': { body: () => ({ job: 'no-such-job' }), params: { id: [plan] } },
    'POST /api/plans/:id/next': { body: () => ({ tubes: 4 }), params: { id: [plan] } },
    'GET /api/plans/:id/sheet': { body: null, params: { id: [plan] }, query: sheetQuery },
    'POST /api/plans/:id/sheet': { body: () => ({ replicates: 2, doses: ['0', '1e6 1/mL', '1e7 1/mL'] }), params: { id: [plan] }, query: ['format', 'paper', 'notFitStatus'] },
    'GET /api/jobs': { body: null },
    'GET /api/jobs/:id': { body: null, params: { id: [job] } },
    'DELETE /api/jobs/:id': { body: null, params: { id: [job] } },
    'GET /api/jobs/:id/events': { body: null, params: { id: [job] } },
    'POST /api/fits/msd': { body: () => ({ data: msdCsv, options: { model: 'passive-2d' } }) },
    'POST /api/fits/kinetics': { body: () => ({ data: 'c [mM],r [1/s]\n1,1\n2,1.6\n5,2.6\n10,3.2\n20,3.6\n', options: {} }) },
    'POST /api/fits/drift': { body: () => ({ data: 'gradient [mM/mm],velocity [um/s]\n-2,0.21\n-1,0.09\n1,-0.11\n2,-0.19\n3,-0.31\n' }) },
    'POST /api/fits/quantal': { body: () => ({ data: 'dose [1/mL],tubes,responded\n1e6,6,0\n2e6,6,2\n4e6,6,4\n8e6,6,6\n', options: { link: 'probit' } }) },
    'POST /api/fits/stokes-einstein': { body: () => ({ radius: '1 um', temperature: '25 degC' }) },
    'POST /api/species/:id/measurements': { body: () => ({ method: 'msd', data: msdCsv, fileName: 'fuzz.csv' }), params: { id: ids.species } },
    'GET /api/species/:id/measurements': { body: null, params: { id: ids.species } },
    'GET /api/measurements/:id': { body: null, params: { id: [measurement] } },
    'POST /api/measurements/:id/apply': { body: () => ({ baseRevision: 1, use: 'diffusivity' }), params: { id: [measurement] } },
  };
  for (const [type, path] of [
    ['chemical', '/api/chemicals'],
    ['species', '/api/species'],
  ] as const) {
    const record = () => (type === 'chemical' ? chemicalRecord('fz-new') : speciesRecord('fz-new', { couplings: [{ chemical: 'h2o2', activity: '-2e-16 mol/s', mobility: '50 um^2/(s*mM)' }] }));
    const p = { id: ids[type] };
    out[`POST ${path}`] = { body: () => ({ record: record(), author: 'fuzzer', note: 'n' }) };
    out[`GET ${path}`] = { body: null, query: listQuery };
    out[`GET ${path}/:id`] = { body: null, params: p };
    out[`PUT ${path}/:id`] = { body: () => ({ baseRevision: 1, record: { ...record(), id: ids[type][0] }, note: 'n' }), params: p };
    out[`POST ${path}/:id/retire`] = { body: () => ({ baseRevision: 1, note: 'n' }), params: p };
    out[`POST ${path}/:id/restore`] = { body: () => ({ baseRevision: 1, note: 'n' }), params: p };
    out[`GET ${path}/:id/revisions`] = { body: null, params: p };
    out[`GET ${path}/:id/revisions/:revision`] = { body: null, params: { ...p, revision: ['1'] } };
    out[`GET ${path}/:id/hazards`] = { body: null, params: p };
    out[`PUT ${path}/:id/hazards`] = { body: () => ({ baseVersion: 0, hazards: hazardSet, note: 'n' }), params: p };
  }
  return out;
}

// ---------------------------------------------------------------- hostile material

/** Raw JSON text spliced in where a value stands (marker strings are replaced after JSON.stringify). */
const RAW: Record<string, () => string> = {
  deepArrays: () => '['.repeat(5000) + ']'.repeat(5000),
  deepObjects: () => '{"a":'.repeat(5000) + '1' + '}'.repeat(5000),
  justTooDeep: () => '['.repeat(LIMITS.depth + 1) + ']'.repeat(LIMITS.depth + 1),
  couplings200k: () => '[' + Array(200_000).fill('{"chemical":"h2o2"}').join(',') + ']',
  numbers200k: () => '[' + Array(200_000).fill('1').join(',') + ']',
  strings50k: () => '[' + Array(50_000).fill('"1 um"').join(',') + ']',
  proto: () => '{"__proto__":{"polluted":true}}',
  constructorProto: () => '{"constructor":{"prototype":{"polluted":true}}}',
  duplicateKeys: () => '{"id":"a","id":"b"}',
  infinity: () => '1e999',
  minusInfinity: () => '-1e999',
  hugeInteger: () => '123456789012345678901234567890',
  badCsv: () => JSON.stringify('lag [s],msd [um^2]\n' + 'x,y\n'.repeat(50_000)),
  manyKeys: () => '{' + Array.from({ length: 20_000 }, (_, i) => `"k${i}":"1 mM"`).join(',') + '}',
};
const ODD_STRINGS = [
  '', ' ', 'NaN', 'Infinity', '-Infinity', '1e999', '-1e999', '1e-999', '0x10', '1_000', '+', '-0', 'null', 'undefined', 'true',
  '1e999 um', 'um^999', '1 um^999', '1 um^-999', '1 um^0.5', '5 µm', '5 μm', '5 percent percent', '1 um^2/s^', '1 (', '1 um)', '3 m m', '2 kg/L/L/L',
  '1 degC', '-300 degC', '1e308 mM', '1e400 1/mL', '1\u0000 um', '\uff11 um', '1 UM', '1 um um', '1 ^2', '1/0 mM', '0/0', '1 mM + 1 mM', 'sqrt(2) um',
  '__proto__', 'constructor', 'toString', 'hasOwnProperty', '../../etc/passwd', '<script>alert(1)</script>', "'; DROP TABLE shelf_items; --", '\ud800', '😀',
];
const longString = fc.constantFrom(65, 201, 2001, 10_001, 1_000_001).map((n) => 'x'.repeat(n));
const oddNumber = fc.constantFrom(0, -0, -1, 1.5, Number.MAX_VALUE, -Number.MAX_VALUE, Number.MIN_VALUE, 2 ** 53 + 1, 4294967296, -1e-320);
const protoObject = fc.constantFrom({ constructor: { prototype: { x: 1 } } }, { toString: 1, valueOf: 'x' }, { prototype: null });

/** A hostile value: a marker for raw text, an odd string or number, a wrong type, a generated JSON value. */
const hostile: fc.Arbitrary<unknown> = fc.oneof(
  { weight: 3, arbitrary: fc.constantFrom(...Object.keys(RAW)).map((k) => `@@RAW:${k}@@`) },
  { weight: 6, arbitrary: fc.constantFrom(...ODD_STRINGS) },
  { weight: 2, arbitrary: longString },
  { weight: 3, arbitrary: oddNumber },
  { weight: 3, arbitrary: fc.constantFrom(null, true, false, [], {}, [null], [[]], { value: 'NaN', sd: '-1' }) },
  { weight: 2, arbitrary: protoObject },
  { weight: 4, arbitrary: fc.jsonValue({ maxDepth: 3 }) },
  { weight: 2, arbitrary: fc.string({ unit: 'binary', maxLength: 40 }) },
);

/** How often each raw fragment was spliced into a body (printed with the figures). */
const spliced = new Map<string, number>();

/** Every path into a JSON value (the root included). */
function paths(v: unknown, at: (string | number)[] = [], out: (string | number)[][] = []): (string | number)[][] {
  out.push(at);
  if (Array.isArray(v)) v.forEach((x, i) => paths(x, [...at, i], out));
  else if (v !== null && typeof v === 'object') for (const [k, x] of Object.entries(v)) paths(x, [...at, k], out);
  return out;
}

function setAt(root: unknown, path: (string | number)[], value: unknown): unknown {
  if (path.length === 0) return value;
  const copy = structuredClone(root) as Record<string | number, unknown>;
  let cur = copy;
  for (const k of path.slice(0, -1)) cur = cur[k] as Record<string | number, unknown>;
  Object.defineProperty(cur, path[path.length - 1]!, { value, enumerable: true, writable: true, configurable: true });
  return copy;
}

/** JSON text with the raw markers spliced in. */
function render(v: unknown): string {
  return (JSON.stringify(v) ?? 'null').replace(/"@@RAW:(\w+)@@"/g, (_m, k: string) => {
    spliced.set(k, (spliced.get(k) ?? 0) + 1);
    return RAW[k]!();
  });
}

const mutation = (template: unknown) =>
  fc.record({
    // a few mutations of one valid body
    edits: fc.array(fc.tuple(fc.nat(), hostile), { minLength: 1, maxLength: 3 }),
    addKey: fc.option(fc.tuple(fc.constantFrom('__proto__', 'constructor', 'extra', 'x'.repeat(300)), hostile), { freq: 4 }),
  }).map(({ edits, addKey }) => {
    let v = template;
    for (const [n, h] of edits) {
      const all = paths(v);
      v = setAt(v, all[n % all.length]!, h);
    }
    let text = render(v);
    if (addKey && text.startsWith('{') && text.length > 2) {
      text = `{${JSON.stringify(addKey[0])}:${render(addKey[1])},` + text.slice(1);
    }
    return text;
  });

const CONTENT_TYPES = ['application/json', 'application/json; charset=utf-8', 'text/plain', 'application/x-www-form-urlencoded', 'multipart/form-data; boundary=x', 'application/xml', 'application/vnd.brink+json', 'application/json; charset=latin1', ''];

const hostileParam = fc.oneof(
  fc.constantFrom('0', '-1', '1e999', 'NaN', '1.5', '99999999999999999999', '__proto__', 'constructor', 'toString', '%00', '..%2F..%2Fetc', '%E2%80%8B', 'a%20b', 'x'.repeat(65), 'x'.repeat(5000), '%F0%9F%98%80', '%C0%AF', 'ptj-1um-b07;DROP'),
  fc.string({ maxLength: 30 }).map(encodeURIComponent),
);
/** Percent-encoded; a lone surrogate becomes the bytes of an invalid UTF-8 sequence (hostile too). */
function encode(s: string): string {
  try {
    return encodeURIComponent(s);
  } catch {
    return encodeURIComponent(s.replace(/[\ud800-\udfff]/g, '')) + '%ED%A0%80';
  }
}
const queryString = (keys: string[]) =>
  fc
    .array(fc.tuple(fc.oneof(fc.constantFrom(...(keys.length ? keys : ['q'])), fc.constantFrom('__proto__', 'constructor', 'x', 'limit[]', 'a'.repeat(300))), fc.oneof(fc.constantFrom(...ODD_STRINGS), longString.filter((s) => s.length < 20_000), fc.string({ maxLength: 20 }), fc.constantFrom('1', '0', '-5', '500', '501', 'true', 'json', 'html', 'md', 'A4'))), { maxLength: 6 })
    .map((pairs) => pairs.map(([k, v]) => `${encode(k)}=${encode(v)}`).join('&'));

// ---------------------------------------------------------------- the app and the checks

const WRITE = new Set(['POST', 'PUT', 'PATCH', 'DELETE']);
const LEAKS = /\n\s+at [^\n]*:\d+:\d+|SqliteError|SQLITE_|\bSELECT\b[^"]*\bFROM\b|\bINSERT INTO\b|node_modules|\/work\//;

let app: App;
let cases: Record<string, RouteCase>;
const stats = { requests: 0, status: new Map<number, number>(), fiveXX: 0, rejectedWrites: 0, unchangedChecked: 0, unitStrings: 0 };
const failures: string[] = [];

/** What a rejected write must leave as it was. */
function fingerprint(): string {
  const exp = app.shelf.exportShelf() as Record<string, unknown>;
  delete exp.exportedAt;
  const counts = ['shelf_items', 'shelf_revisions', 'measurements', 'measurement_applications', 'hazard_sets', 'species_hazard_sets', 'access_tokens'].map(
    (t) => (app.db.prepare(`SELECT count(*) AS n FROM ${t}`).get() as { n: number }).n,
  );
  // per plan (plans a background job adds meanwhile are left out by the caller): its text revisions and outcome sets too
  const plans = app.db
    .prepare(
      'SELECT id, name, notes, (SELECT count(*) FROM plan_text_revisions t WHERE t.plan_id = plans.id) AS texts, (SELECT count(*) FROM outcome_sets o WHERE o.plan_id = plans.id) AS outcomes FROM plans ORDER BY id',
    )
    .all() as { id: number }[];
  return JSON.stringify({ exp, counts, plans });
}
let before = '';

/** Send one request and check its answer; false when it added a failure (fast-check then reports the case). */
async function check(method: string, url: string, payload?: string, contentType?: string): Promise<boolean> {
  const n = failures.length;
  await send(method, url, payload, contentType);
  return failures.length === n;
}

async function send(method: string, url: string, payload?: string, contentType?: string) {
  const headers: Record<string, string> = {};
  if (payload !== undefined && contentType) headers['content-type'] = contentType;
  const plansBefore = (app.db.prepare('SELECT max(id) AS m FROM plans').get() as { m: number | null }).m ?? 0;
  const r = await app.inject({ method: method as 'GET', url, headers, ...(payload !== undefined ? { payload } : {}) });
  stats.requests++;
  stats.status.set(r.statusCode, (stats.status.get(r.statusCode) ?? 0) + 1);
  const where = `${method} ${url.slice(0, 120)} [${contentType ?? '-'}] ${payload === undefined ? '' : payload.slice(0, 160)}`;
  const fail = (why: string) => failures.length < 20 && failures.push(`${why} — ${where} → ${r.statusCode} ${r.body.slice(0, 300)}`);
  if (r.statusCode >= 500) {
    stats.fiveXX++;
    fail('5xx');
  }
  if (typeof r.headers['x-request-id'] !== 'string') fail('no x-request-id');
  if (LEAKS.test(r.body)) fail('a stack trace, SQL or a path in the body');
  const sheetPage = /\/sheet/.test(url) && r.statusCode === 422 && !/json/.test(String(r.headers['content-type']));
  if (r.statusCode >= 400 && !sheetPage) {
    let b: { error?: unknown; message?: unknown; problems?: { path?: unknown; message?: unknown }[] } | null = null;
    try {
      b = r.json();
    } catch {
      fail('a 4xx that is not JSON');
    }
    if (b) {
      if (typeof b.error !== 'string' || typeof b.message !== 'string' || b.message === '') fail('a 4xx without error and message');
      if (b.error === 'invalid-input' && (!Array.isArray(b.problems) || b.problems.length === 0 || b.problems.some((p) => typeof p.path !== 'string' || typeof p.message !== 'string' || p.message === '')))
        fail('an invalid-input without problems, each with a path and a message');
    }
  }
  if (WRITE.has(method)) {
    if (r.statusCode >= 400) {
      stats.rejectedWrites++;
      // plans a background job stored meanwhile are not the rejected write's doing
      const now = fingerprint();
      const plansNow = JSON.parse(now) as { plans: { id: number }[] };
      const wasThen = JSON.parse(before) as { plans: { id: number }[] };
      const same = JSON.stringify({ ...plansNow, plans: plansNow.plans.filter((p) => p.id <= plansBefore) }) === JSON.stringify({ ...wasThen, plans: wasThen.plans.filter((p) => p.id <= plansBefore) });
      stats.unchangedChecked++;
      if (!same) fail('a rejected write changed the shelf');
      before = now;
    } else before = fingerprint();
  }
  return r;
}

function fill(url: string, params: Record<string, string> = {}): string {
  return url.replace(/:(\w+)/g, (_m, k: string) => params[k] ?? 'x');
}

beforeAll(async () => {
  const db = openDatabase(':memory:');
  seedDemoShelf(db);
  app = await buildApp({ config: { closeDatabase: true, rateLimit: false, workers: 1, jobTimeLimit: 3, requestTimeLimit: 20, maxJobs: 50 }, db });
  // a stored plan, a measurement and a job, so that the routes with ids have something to find
  const started = (await app.inject({ method: 'POST', url: '/api/plans', payload: { base: sample.species, chemicals: sample.chemicals, chamber: sample.chamber, boundary: 'stationary', candidates: ['ptj-1um-b07'] } })).json();
  let job = started;
  for (let i = 0; i < 400 && !['done', 'failed', 'cancelled', 'timed-out'].includes(job.state); i++) {
    await new Promise((r) => setTimeout(r, 50));
    job = (await app.inject({ method: 'GET', url: `/api/jobs/${started.id}` })).json();
  }
  const m = (await app.inject({ method: 'POST', url: '/api/species/ptj-1um-b07/measurements', payload: { method: 'msd', data: msdCsv } })).json();
  cases = routeCases(String(job.result?.planId ?? 1), String(m.id ?? 1), String(started.id));
  before = fingerprint();
}, 60_000);

afterAll(async () => {
  const byStatus = [...stats.status.entries()].sort((a, b) => a[0] - b[0]).map(([s, n]) => `${s}: ${n}`).join(', ');
  console.log(`fuzz (seed ${SEED}): ${stats.requests} requests fuzzed, ${stats.fiveXX} 5xx seen; by status ${byStatus}; ${stats.rejectedWrites} rejected writes, shelf checked unchanged after each; ${stats.unitStrings} values given to the unit parser directly`);
  console.log(`raw fragments spliced into bodies: ${[...spliced.entries()].map(([k, n]) => `${k} ${n}`).join(', ')}`);
  await app?.close();
});

describe('fuzzing the unit parser', () => {
  it('any string, number or { value, sd }: a finite SI value of the asked dimension and sign, or a UnitError; never another error', () => {
    const dims = Object.values(DIMENSIONS) as Dimension[];
    const units = ['um', 'μm', 'µm', 'mM', 'mol/s', 'um^2/s', '1/mL', 'percent', 'degC', 'K', 'g/mL', 'Pa*s', 'um^-3', 's', 'm^999', 'um^2/(s*mM)', '1/s', 'mol/L', 'kg'];
    const numberText = fc.oneof(fc.double().map(String), fc.integer().map(String), fc.constantFrom('1e999', '-1e999', '1e-999', 'NaN', 'Infinity', '0', '-0', '.5', '5.', '1e', 'e5', '0x1f', '1_0'));
    const unitText = fc.oneof(
      fc.constantFrom(...ODD_STRINGS),
      fc.tuple(numberText, fc.constantFrom('', ' ', '  ', '\t'), fc.array(fc.constantFrom(...units), { maxLength: 3 }), fc.constantFrom('', '^2', '^-1', '^999', '^0.5', '/', '*', ' percent', ')')).map(([n, sp, us, tail]) => `${n}${sp}${us.join(' ')}${tail}`),
      fc.string({ unit: 'binary', maxLength: 30 }),
    );
    const raw = fc.oneof(unitText, fc.double(), fc.record({ value: fc.oneof(unitText, fc.double()), sd: fc.oneof(unitText, fc.double(), fc.constant(undefined)) }, { requiredKeys: ['value'] }));
    let parsed = 0;
    let refused = 0;
    fc.assert(
      fc.property(raw, fc.constantFrom(...dims), fc.constantFrom('positive', 'nonnegative', 'any') as fc.Arbitrary<'positive' | 'nonnegative' | 'any'>, (r, dimension, sign) => {
        try {
          const q = parseQuantity(r, { dimension, sign }, 'x');
          parsed++;
          if (!Number.isFinite(q.value) || !Number.isFinite(q.sd) || q.sd < 0) return false;
          if (sign === 'positive' && !(q.value > 0)) return false;
          if (sign === 'nonnegative' && !(q.value >= 0)) return false;
          return true;
        } catch (e) {
          refused++;
          return e instanceof UnitError && e.reason.length > 0;
        }
      }),
      { seed: SEED + 3, numRuns: RUNS.units },
    );
    stats.unitStrings = parsed + refused;
    // the generator must reach both outcomes, or the property says little
    expect(parsed).toBeGreaterThan(50);
    expect(refused).toBeGreaterThan(50);
  });
});

describe('fuzzing every endpoint', () => {
  it('knows every route of the app (a new route must be added here)', () => {
    const routes = app.routeTable.filter((r) => r.method !== 'HEAD' && !r.url.startsWith('/api/docs')).map((r) => `${r.method} ${r.url}`);
    expect(new Set(routes)).toEqual(new Set(Object.keys(cases)));
  });

  it('hostile mutations of a valid body of each route: no 5xx, 4xx named, shelf unchanged on refusal', async () => {
    for (const [key, c] of Object.entries(cases)) {
      if (!c.body) continue;
      const [method, url] = key.split(' ') as [string, string];
      const template = JSON.parse(JSON.stringify(c.body()));
      await fc.assert(
        fc.asyncProperty(mutation(template), fc.constantFrom(...Object.values(c.params ?? {}).flat(), 'x'), async (text, id) => {
          const params = Object.fromEntries(Object.entries(c.params ?? {}).map(([k, v]) => [k, v.includes(id) ? id : v[0]!]));
          return check(method, fill(url, params), text, 'application/json');
        }),
        { seed: SEED, numRuns: RUNS.perRoute },
      );
    }
    expect(failures).toEqual([]);
  }, 600_000);

  it('generic hostile bodies in odd content types at every route', async () => {
    const all = Object.entries(cases);
    await fc.assert(
      fc.asyncProperty(fc.nat(all.length - 1), fc.oneof(hostile.map(render), fc.string({ maxLength: 200 })), fc.constantFrom(...CONTENT_TYPES), async (i, text, ct) => {
        const [key, c] = all[i]!;
        const [method, url] = key.split(' ') as [string, string];
        const params = Object.fromEntries(Object.entries(c.params ?? {}).map(([k, v]) => [k, v[0]!]));
        return check(method, fill(url, params), method === 'GET' ? undefined : text, ct);
      }),
      { seed: SEED + 1, numRuns: RUNS.generic },
    );
    expect(failures).toEqual([]);
  }, 600_000);

  it('hostile query strings and path parameters at every route', async () => {
    const all = Object.entries(cases);
    await fc.assert(
      fc.asyncProperty(
        fc.nat(all.length - 1).chain((i) => fc.tuple(fc.constant(i), queryString(all[i]![1].query ?? []))),
        fc.boolean(),
        hostileParam,
        async ([i, q], goodParams, bad) => {
          const [key, c] = all[i]!;
          const [method, url] = key.split(' ') as [string, string];
          const params = Object.fromEntries(Object.entries(c.params ?? {}).map(([k, v]) => [k, goodParams ? v[0]! : bad]));
          // a body-taking route gets its valid body: only the query and the parameters are hostile
          const body = c.body ? JSON.stringify(c.body()) : undefined;
          return check(method, `${fill(url, params)}${q ? `?${q}` : ''}`, method === 'GET' || method === 'DELETE' ? undefined : body, 'application/json');
        },
      ),
      { seed: SEED + 2, numRuns: RUNS.query },
    );
    expect(failures).toEqual([]);
  }, 600_000);

  it('every body route: a body nested 5,000 levels deep and arrays of 200,000 are 400s naming the problem', async () => {
    for (const [key, c] of Object.entries(cases)) {
      if (!c.body) continue;
      const [method, url] = key.split(' ') as [string, string];
      const params = Object.fromEntries(Object.entries(c.params ?? {}).map(([k, v]) => [k, v[0]!]));
      const deep = await send(method, fill(url, params), RAW.deepObjects!(), 'application/json');
      expect(deep.statusCode, key).toBe(400);
      expect(deep.json().message, key).toMatch(/nested deeper than 64 levels/);
    }
    const big = await send('POST', '/api/species', JSON.stringify({ record: { ...speciesRecord('fz-big'), couplings: '@@RAW:couplings200k@@' } }).replace('"@@RAW:couplings200k@@"', RAW.couplings200k!()), 'application/json');
    expect(big.statusCode).toBe(400);
    expect(big.json().problems[0]).toMatchObject({ path: 'record.couplings' });
    const imported = await send('POST', '/api/shelf/import', JSON.stringify({ format: 'brink-shelf', version: 1, species: [{ ...speciesRecord('fz-big'), couplings: Array(20_000).fill({ chemical: 'x!' }) }] }), 'application/json');
    expect(imported.statusCode).toBe(400);
    expect(imported.json().problems[0].path).toBe('species[0].couplings');
    expect(failures).toEqual([]);
  }, 120_000);
});
