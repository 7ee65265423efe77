/**
 * The limits of the API (server/schema/limits.ts) and its error hygiene: bounds past which a request is a
 * 400 naming the field, the depth of a JSON body, capped problem lists, rate limits on the compute
 * endpoints with a 429 in the project's error shape, request ids, no driver or stack text in any answer.
 */
import { Writable } from 'node:stream';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { buildApp, COMPUTE_ROUTES, type App } from '../../server/http/app.js';
import { errorHandler } from '../../server/http/errors.js';
import { parseJsonBody, tooDeep } from '../../server/http/json-body.js';
import { LIMITS } from '../../server/schema/limits.js';
import { mixtureSchema } from '../../server/schema/mixture.js';
import { seedDemoShelf } from '../../server/shelf/seed.js';
import { openDatabase } from '../../server/store/db.js';
import { tokensRepository } from '../../server/store/tokens.js';
import { speciesRecord } from '../helpers/app.js';

let app: App;
beforeAll(async () => {
  const db = openDatabase(':memory:');
  seedDemoShelf(db);
  app = await buildApp({ config: { closeDatabase: true, rateLimit: false, workers: 1 }, db });
});
afterAll(async () => app.close());

const json = { 'content-type': 'application/json' };
const sample = { species: [{ id: 'ptj-1um-b09', volumeFraction: '0.1 percent' }], chemicals: { h2o2: '200 mM' }, chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' } };
const mixtureSpecies = (i: number) => ({ id: `s${i}`, diffusivity: '0.2 um^2/s', radius: '1 um', volumeFraction: '0.01 percent' });

describe('bounds', () => {
  it(`a mixture of ${LIMITS.species} species is analysed; one more is a 400 naming species`, async () => {
    const ok = mixtureSchema.safeParse({ species: Array.from({ length: LIMITS.species }, (_, i) => mixtureSpecies(i)), chamber: { walls: 'unbounded' } });
    expect(ok.success).toBe(true);
    const r = await app.inject({ method: 'POST', url: '/api/analyze/mixture', payload: { species: Array.from({ length: LIMITS.species + 1 }, (_, i) => mixtureSpecies(i)), chamber: { walls: 'unbounded' } } });
    expect(r.statusCode).toBe(400);
    expect(r.json().problems).toEqual([{ path: 'species', message: `Too big: expected array to have <=${LIMITS.species} items` }]);
  });

  it('a shelf species with more couplings than the bound, a long unit string, a long name: 400s with their paths', async () => {
    const couplings = Array.from({ length: LIMITS.couplings + 1 }, () => ({ chemical: 'h2o2', mobility: '1 um^2/(s*mM)' }));
    const many = await app.inject({ method: 'POST', url: '/api/species', payload: { record: speciesRecord('fz1', { couplings }) } });
    expect(many.json().problems).toEqual([{ path: 'record.couplings', message: `Too big: expected array to have <=${LIMITS.couplings} items` }]);
    const unit = await app.inject({ method: 'POST', url: '/api/species', payload: { record: speciesRecord('fz1', { radius: '1 ' + 'u'.repeat(LIMITS.quantity) }) } });
    expect(unit.statusCode).toBe(400);
    expect(unit.json().problems[0].path).toBe('record.radius');
    const chem = await app.inject({ method: 'POST', url: '/api/analyze/mixture', payload: { name: 'n'.repeat(LIMITS.name + 1), species: [mixtureSpecies(0)], chamber: { walls: 'unbounded' } } });
    expect(chem.json().problems[0].path).toBe('name');
    // 20,000 unknown keys: five named, the rest counted
    const extra = Object.fromEntries(Array.from({ length: 20_000 }, (_, i) => [`k${i}`, 1]));
    const keys = await app.inject({ method: 'POST', url: '/api/chemicals', payload: { record: { id: 'a', name: 'b', diffusivity: 1e-9, ...extra } } });
    expect(keys.json().problems).toEqual([{ path: 'record', message: 'Unrecognized keys: "k0", "k1", "k2", "k3", "k4" and 19995 more' }]);
  });

  it('a sample with more chemical levels than the bound is one problem, counted before any entry is read', async () => {
    const chemicals = Object.fromEntries(Array.from({ length: 20_000 }, (_, i) => [`c${i}`, '1 mM']));
    const r = await app.inject({ method: 'POST', url: '/api/analyze', payload: { ...sample, chemicals } });
    expect(r.statusCode).toBe(400);
    expect(r.json().problems).toEqual([{ path: 'chemicals', message: `at most ${LIMITS.chemicals} entries, got 20000` }]);
  });

  it('a plan with more candidates than the bound is told the list is too long; a typo of "all" is told the word (found in review)', async () => {
    const req = { base: [{ id: 'ptj-1um-b09', volumeFraction: '0.1 percent' }], chemicals: { h2o2: '200 mM' }, chamber: { walls: 'sealed', length: '2 mm' }, boundary: 'stationary' };
    const many = await app.inject({ method: 'POST', url: '/api/plans', payload: { ...req, candidates: Array.from({ length: LIMITS.candidates + 1 }, (_, i) => `s${i}`) } });
    expect(many.statusCode).toBe(400);
    expect(many.json().problems).toEqual([{ path: 'candidates', message: expect.stringMatching(new RegExp(`<=${LIMITS.candidates}`)) }]);
    const typo = await app.inject({ method: 'POST', url: '/api/plans', payload: { ...req, candidates: 'al' } });
    expect(typo.statusCode).toBe(400);
    expect(typo.json().problems).toEqual([{ path: 'candidates', message: expect.stringMatching(/"all"/) }]);
  });

  it('an import of 200,000 couplings is a 400 naming the field; 10,000 bad entries report 100 problems and count the rest', async () => {
    const big = await app.inject({ method: 'POST', url: '/api/shelf/import', payload: { format: 'brink-shelf', version: 1, species: [speciesRecord('b', { couplings: Array(200_000).fill({ chemical: 'x!' }) })] } });
    expect(big.statusCode).toBe(400);
    expect(big.json().problems).toEqual([{ path: 'species[0].couplings', message: `Too big: expected array to have <=${LIMITS.couplings} items` }]);
    const bad = Array.from({ length: 10_000 }, (_, i) => speciesRecord(`b${i}`, { radius: '-1 um', couplings: [] }));
    const r = await app.inject({ method: 'POST', url: '/api/shelf/import', payload: { format: 'brink-shelf', version: 1, species: bad } });
    expect(r.statusCode).toBe(400);
    const body = r.json();
    expect(body.problems).toHaveLength(LIMITS.problems);
    expect(body.more).toBe(10_000 - LIMITS.problems);
    expect(body.problems[0]).toEqual({ path: 'species[0].radius', message: 'must be positive, got "-1 um"' });
    expect(body.message).toMatch(/… and 9900 more problems$/);
  });
});

describe('problems of raw data', () => {
  it('a CSV of 10,000 bad rows: 100 problems listed, the rest counted (collected only so far, in the worker too)', async () => {
    const data = 'gradient [mM/mm],velocity [um/s]\n' + 'x,y\n'.repeat(10_000);
    const r = await app.inject({ method: 'POST', url: '/api/fits/drift', payload: { data } });
    expect(r.statusCode).toBe(400);
    expect(r.json().problems).toHaveLength(LIMITS.problems);
    expect(r.json().more).toBe(20_000 - LIMITS.problems);
    expect(r.json().problems[0]).toEqual({ path: 'line 2, column 1 (gradient [mM/mm])', message: 'not a number: "x"' });
  });

  it(`a CSV past ${LIMITS.rows} data rows is refused before it is parsed, naming data`, async () => {
    const data = 'gradient [mM/mm],velocity [um/s]\n# a comment\n\n' + '1,2\n'.repeat(LIMITS.rows + 1);
    const r = await app.inject({ method: 'POST', url: '/api/fits/drift', payload: { data } });
    expect(r.json().problems).toEqual([{ path: 'data', message: `at most ${LIMITS.rows} data rows in one fit, got ${LIMITS.rows + 1}` }]);
  });
});

describe('JSON bodies', () => {
  it('the depth scan names where a body goes too deep, counts brackets in strings as text, and passes the limit itself', () => {
    expect(tooDeep('{"a":[1,{"b":[[[]]]}]}', 3)).toEqual(['a', 1, 'b']);
    expect(tooDeep('{"a":"[[[[[[[[[[", "b\\"[[[[": 1}', 2)).toBeNull();
    expect(tooDeep('['.repeat(LIMITS.depth) + ']'.repeat(LIMITS.depth), LIMITS.depth)).toBeNull();
    expect(tooDeep('['.repeat(LIMITS.depth + 1) + ']'.repeat(LIMITS.depth + 1), LIMITS.depth)).toHaveLength(LIMITS.depth);
    expect(() => parseJsonBody('{"x": {"__proto__": {"polluted": 1}}}')).toThrow(/x\.__proto__: the key "__proto__" is not allowed/);
    expect(({} as Record<string, unknown>).polluted).toBeUndefined();
    expect(parseJsonBody('\ufeff{"a": 1}')).toEqual({ a: 1 });
  });

  it('a body nested 5,000 levels deep is a 400 naming the problem at every kind of route', async () => {
    for (const url of ['/api/analyze/mixture', '/api/shelf/import', '/api/chemicals', '/api/plans', '/api/fits/msd']) {
      const r = await app.inject({ method: 'POST', url, headers: json, payload: '{"a":'.repeat(5000) + '1' + '}'.repeat(5000) });
      expect(r.statusCode, url).toBe(400);
      expect(r.json()).toMatchObject({ error: 'invalid-input', in: 'body' });
      expect(r.json().problems[0].message).toMatch(`nested deeper than ${LIMITS.depth} levels`);
    }
  });

  it('malformed JSON, an empty JSON body, a foreign content type, a body too large: JSON errors with their labels', async () => {
    const bad = await app.inject({ method: 'POST', url: '/api/chemicals', headers: json, payload: '{"record": ' });
    expect(bad.statusCode).toBe(400);
    expect(bad.json()).toMatchObject({ error: 'bad-request', code: 'invalid-json' });
    const empty = await app.inject({ method: 'POST', url: '/api/chemicals', headers: json, payload: '' });
    expect(empty.statusCode).toBe(400);
    expect(empty.json().message).toMatch(/empty/);
    // (a form or text/plain body is refused earlier, by the access layer: 415 json-required; tests/http/access.test.ts)
    const form = await app.inject({ method: 'POST', url: '/api/chemicals', headers: { 'content-type': 'application/xml' }, payload: '<a/>' });
    expect(form.statusCode).toBe(415);
    expect(form.json()).toMatchObject({ error: 'unsupported-media-type' });
    const small = await buildApp({ config: { closeDatabase: true, rateLimit: false, workers: 1, bodyLimit: 1000 }, db: openDatabase(':memory:') });
    const large = await small.inject({ method: 'POST', url: '/api/chemicals', headers: json, payload: JSON.stringify({ note: 'x'.repeat(2000) }) });
    await small.close();
    expect(large.statusCode).toBe(413);
    expect(large.json()).toMatchObject({ error: 'too-large' });
  });
});

describe('error hygiene', () => {
  const reply = () => {
    const r = { status: 0, body: undefined as unknown, code(s: number) { r.status = s; return r; }, send(b: unknown) { r.body = b; return r; } };
    return r;
  };
  it('a database driver error never reaches the client, whatever status it carries', () => {
    const req = { log: { error: vi.fn() } };
    for (const statusCode of [undefined, 400]) {
      const err = Object.assign(new Error('UNIQUE constraint failed: shelf_items.key; INSERT INTO shelf_items …'), { name: 'SqliteError', code: 'SQLITE_CONSTRAINT_UNIQUE', statusCode });
      const r = reply();
      errorHandler.call(null, err, req as never, r as never);
      expect(r.status).toBe(500);
      expect(r.body).toEqual({ error: 'internal', message: 'internal error' });
    }
    expect(req.log.error).toHaveBeenCalledTimes(2);
  });

  it('a path parameter past fastify\'s length and a URL that is not UTF-8: JSON 4xx with a request id, the URL not echoed', async () => {
    const long = await app.inject({ method: 'GET', url: '/api/chemicals/' + 'x'.repeat(500) });
    expect(long.statusCode).toBe(414);
    expect(long.json()).toMatchObject({ error: 'too-large', code: 'param-too-long' });
    expect(long.body).not.toContain('xxxxxxxxxx');
    const bad = await app.inject({ method: 'GET', url: '/api/chemicals/%C0%AF' });
    expect(bad.statusCode).toBe(400);
    expect(bad.json()).toMatchObject({ error: 'bad-request', code: 'bad-url' });
    for (const r of [long, bad]) expect(r.headers['x-request-id']).toMatch(/^[0-9a-f-]{36}$/);
  });

  it('every answer carries x-request-id: a sane incoming one is kept, another is replaced; each log line of a request carries it', async () => {
    const lines: string[] = [];
    const sink = new Writable({ write(chunk, _enc, done) { lines.push(String(chunk)); done(); } });
    const logged = await buildApp({ config: { closeDatabase: true, rateLimit: false, workers: 1, logger: { level: 'info', stream: sink } }, db: openDatabase(':memory:') });
    const kept = await logged.inject({ method: 'GET', url: '/api/health', headers: { 'x-request-id': 'lab-pc-7.42' } });
    expect(kept.headers['x-request-id']).toBe('lab-pc-7.42');
    const replaced = await logged.inject({ method: 'GET', url: '/api/nothing', headers: { 'x-request-id': 'bad id\u0007 with spaces' } });
    expect(replaced.statusCode).toBe(404);
    expect(replaced.headers['x-request-id']).toMatch(/^[0-9a-f-]{36}$/);
    await logged.close();
    const records = lines.map((l) => JSON.parse(l) as { reqId?: string; msg: string }).filter((l) => /request/.test(l.msg));
    expect(records.length).toBeGreaterThanOrEqual(4); // incoming request and request completed, twice
    expect(records.filter((l) => l.reqId === 'lab-pc-7.42')).toHaveLength(2);
    expect(records.filter((l) => l.reqId === replaced.headers['x-request-id'])).toHaveLength(2);
  });
});

describe('rate limits on the compute endpoints', () => {
  it('every listed compute endpoint is a route of the app', () => {
    const routes = new Set(app.routeTable.map((r) => `${r.method} ${r.url}`));
    for (const c of COMPUTE_ROUTES) expect(routes.has(c), c).toBe(true);
  });

  it('past the limit a 429 in the JSON error shape with a retry hint; a token is its own client; reads are not limited', async () => {
    const limited = await buildApp({ config: { closeDatabase: true, workers: 1, rateLimit: { max: 2, timeWindowMs: 60_000 } }, db: openDatabase(':memory:') });
    try {
      const fit = () => limited.inject({ method: 'POST', url: '/api/fits/drift', payload: { data: 'x' } });
      expect((await fit()).statusCode).toBe(400);
      expect((await fit()).statusCode).toBe(400);
      const refused = await fit();
      expect(refused.statusCode).toBe(429);
      expect(refused.json()).toMatchObject({ error: 'too-many-requests', code: 'rate-limited' });
      expect(refused.json().message).toMatch(/at most 2 in 60 s/);
      expect(refused.json().retryAfter).toBeGreaterThan(0);
      expect(Number(refused.headers['retry-after'])).toBeGreaterThan(0);
      // another compute endpoint is counted on its own; a bearer token is another client
      expect((await limited.inject({ method: 'POST', url: '/api/fits/msd', payload: { data: 'x' } })).statusCode).toBe(400);
      const member = tokensRepository(limited.db).create('lab member A (invented)').secret;
      expect((await limited.inject({ method: 'POST', url: '/api/fits/drift', payload: { data: 'x' }, headers: { authorization: `Bearer ${member}` } })).statusCode).toBe(400);
      expect((await limited.inject({ method: 'POST', url: '/api/fits/drift', payload: { data: 'x' }, headers: { authorization: `Bearer ${member}` } })).statusCode).toBe(400);
      // the same token spelt otherwise is the same client (found in review: each spelling had a fresh limit)
      for (const spelt of [`BEARER ${member}`, `bearer  ${member}`, `bEarer ${member} `])
        expect((await limited.inject({ method: 'POST', url: '/api/fits/drift', payload: { data: 'x' }, headers: { authorization: spelt } })).statusCode, spelt).toBe(429);
      for (let i = 0; i < 5; i++) expect((await limited.inject({ method: 'GET', url: '/api/health' })).statusCode).toBe(200);
    } finally {
      await limited.close();
    }
  });
});
