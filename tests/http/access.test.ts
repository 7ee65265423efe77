/**
 * The access layer (server/http/access.ts): the Host allow-list, writes a page of another site could
 * send (no body, a form, text/plain, a foreign Origin), bearer tokens (none, unknown, revoked, valid),
 * the token's holder as the author of every revision written, reads behind a token by the setting,
 * the security headers, and the token table's own history (migration 0009).
 */
import { request as httpRequest } from 'node:http';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { AccessConfig } from '../../server/http/access.js';
import { isLoopback, parseHost } from '../../server/http/access.js';
import { buildApp, type App } from '../../server/http/app.js';
import { seedDemoShelf } from '../../server/shelf/seed.js';
import { openDatabase } from '../../server/store/db.js';
import { hashToken, tokensRepository } from '../../server/store/tokens.js';
import { chemicalRecord, speciesRecord } from '../helpers/app.js';
import { postPlan } from '../helpers/plans.js';

async function appWith(access?: AccessConfig, demo = false): Promise<App> {
  const db = openDatabase(':memory:');
  if (demo) seedDemoShelf(db);
  return buildApp({ config: { closeDatabase: true, workers: 1, ...(access ? { access } : {}) }, db });
}

type Headers = Record<string, string>;
const json = (payload: unknown, headers: Headers = {}) => ({ payload: JSON.stringify(payload), headers: { 'content-type': 'application/json', ...headers } });
const bearer = (secret: string) => ({ authorization: `Bearer ${secret}` });
const chemicals = async (app: App) => (await app.inject({ method: 'GET', url: '/api/chemicals?includeRetired=true' })).json().total as number;

describe('without tokens, on loopback: open as before, but no write a page of another site could send', () => {
  let app: App;
  beforeAll(async () => {
    app = await appWith();
  });
  afterAll(async () => {
    await app.close();
  });

  it('a JSON write passes with the author the client gives', async () => {
    const r = await app.inject({ method: 'POST', url: '/api/chemicals', ...json({ record: chemicalRecord('fuel'), author: 'a student (invented)' }) });
    expect(r.statusCode).toBe(201);
    expect(r.json()).toMatchObject({ author: 'a student (invented)', note: null });
  });

  it('refuses a write with no body type, or a type a cross-site form or no-cors fetch can send (415), and writes nothing', async () => {
    const before = await chemicals(app);
    const body = JSON.stringify({ record: chemicalRecord('forged') });
    for (const type of [undefined, 'text/plain', 'text/plain;charset=UTF-8', 'application/x-www-form-urlencoded', 'multipart/form-data; boundary=x', ' TEXT/PLAIN ']) {
      const r = await app.inject({ method: 'POST', url: '/api/chemicals', payload: body, headers: type === undefined ? {} : { 'content-type': type } });
      expect(r.statusCode, String(type)).toBe(415);
      expect(r.json()).toMatchObject({ error: 'json-required' });
      expect(r.json().message).toMatch(/application\/json/);
    }
    // the body-less POST a foreign page could send to start a plan (the plan need not exist: the check comes first)
    const rerun = await app.inject({ method: 'POST', url: '/api/plans/9999/rerun' });
    expect(rerun.statusCode).toBe(415);
    expect((await app.inject({ method: 'POST', url: '/api/plans/9999/rerun', ...json({}) })).statusCode).toBe(404);
    // retire without fields, the same
    expect((await app.inject({ method: 'POST', url: '/api/chemicals/fuel/retire' })).statusCode).toBe(415);
    expect(await chemicals(app)).toBe(before);
    // a DELETE always makes a browser ask first (CORS preflight), so it needs no body
    expect((await app.inject({ method: 'DELETE', url: '/api/jobs/none' })).statusCode).toBe(404);
  });

  it('refuses a write whose Origin is not this service (403), even with a JSON body', async () => {
    for (const origin of ['https://evil.example', 'http://localhost.evil.example', 'null', 'http://127.0.0.1.nip.example:80', 'file://']) {
      const r = await app.inject({ method: 'POST', url: '/api/chemicals', ...json({ record: chemicalRecord('x1') }, { origin }) });
      expect(r.statusCode, origin).toBe(403);
      expect(r.json().error).toBe('foreign-origin');
    }
    // the pages' own origin passes
    const own = await app.inject({ method: 'POST', url: '/api/chemicals', ...json({ record: chemicalRecord('x2') }, { origin: 'http://localhost' }) });
    expect(own.statusCode).toBe(201);
    // a read with a foreign Origin is a read (the browser keeps the answer from the foreign page)
    expect((await app.inject({ method: 'GET', url: '/api/chemicals', headers: { origin: 'https://evil.example' } })).statusCode).toBe(200);
  });

  it('answers only to the loopback names: another Host is a 421 (DNS rebinding)', async () => {
    for (const host of ['localhost', 'localhost:3080', '127.0.0.1:3080', '[::1]:3080', 'LOCALHOST']) {
      expect((await app.inject({ method: 'GET', url: '/api/health', headers: { host } })).statusCode, host).toBe(200);
    }
    for (const host of ['evil.example', 'evil.example:3080', '127.0.0.2', 'localhost.evil.example', 'localhost@evil.example']) {
      const r = await app.inject({ method: 'GET', url: '/api/health', headers: { host } });
      expect(r.statusCode, host).toBe(421);
      expect(r.json()).toMatchObject({ error: 'misdirected' });
      expect(r.json().message).toMatch(/--allowed-hosts/);
    }
  });

  it('sends the security headers: a CSP without inline scripts, no framing, nosniff', async () => {
    const r = await app.inject({ method: 'GET', url: '/' });
    const csp = String(r.headers['content-security-policy']);
    const script = /script-src ([^;]*)/.exec(csp)![1]!;
    expect(script).toBe("'self'");
    expect(csp).toMatch(/frame-ancestors 'none'/);
    expect(csp).toMatch(/object-src 'none'/);
    expect(csp).not.toMatch(/unsafe-inline|unsafe-eval|upgrade-insecure-requests/);
    expect(r.headers['x-frame-options']).toBe('DENY');
    expect(r.headers['x-content-type-options']).toBe('nosniff');
    expect(r.headers['strict-transport-security']).toBeUndefined();
    // on errors too
    expect((await app.inject({ method: 'GET', url: '/api/nothing' })).headers['x-content-type-options']).toBe('nosniff');
    expect((await app.inject({ method: 'GET', url: '/api/health', headers: { host: 'evil.example' } })).headers['x-frame-options']).toBe('DENY');
  });

  it('the pages carry no inline script; their scripts are served as files', async () => {
    for (const page of ['/', '/calibrate', '/planner', '/plans/1', '/plans/1/sheet', '/plans/1/outcomes', '/shelf/species/ptj-1um-b07', '/shelf/new']) {
      const r = await app.inject({ method: 'GET', url: page });
      expect(r.statusCode, page).toBe(200);
      const html = r.body;
      expect(html).not.toMatch(/<script(?![^>]*\bsrc=)[^>]*>/);
      const scripts = [...html.matchAll(/<script[^>]*\bsrc="([^"]+)"/g)].map((m) => m[1]!);
      expect(scripts.length, page).toBeGreaterThan(0);
      for (const script of scripts) {
        expect(script).toMatch(/^\/assets\//);
        const js = await app.inject({ method: 'GET', url: script });
        expect(js.statusCode).toBe(200);
        expect(js.headers['content-type']).toMatch(/^text\/javascript/);
      }
    }
  });

  it('an unknown or malformed bearer token is refused even here (401)', async () => {
    expect((await app.inject({ method: 'GET', url: '/api/health', headers: bearer('brink_nothing') })).json().error).toBe('invalid-token');
    expect((await app.inject({ method: 'GET', url: '/api/health', headers: { authorization: 'Basic YTpi' } })).statusCode).toBe(401);
  });
});

describe('with tokens: every write needs one, and its holder is the author', () => {
  let app: App;
  let ada = '';
  let bo = '';
  beforeAll(async () => {
    app = await appWith(undefined, true);
    const tokens = tokensRepository(app.db);
    ada = tokens.create('Ada (invented)').secret;
    bo = tokens.create('Bo (invented)').secret;
  });
  afterAll(async () => {
    await app.close();
  });

  it('a write without a token is 401 and writes nothing; reads stay open', async () => {
    const before = await chemicals(app);
    const r = await app.inject({ method: 'POST', url: '/api/chemicals', ...json({ record: chemicalRecord('fuel'), author: 'Ada (invented)' }) });
    expect(r.statusCode).toBe(401);
    expect(r.json().error).toBe('token-required');
    expect(r.headers['www-authenticate']).toMatch(/^Bearer/);
    for (const [method, url] of [
      ['PUT', '/api/chemicals/h2o2'],
      ['PATCH', '/api/plans/1'],
      ['DELETE', '/api/jobs/x'],
      ['POST', '/api/shelf/import'],
      ['POST', '/api/plans'],
    ] as const) {
      expect((await app.inject({ method, url, ...json({}) })).statusCode, `${method} ${url}`).toBe(401);
    }
    expect((await app.inject({ method: 'POST', url: '/api/chemicals', ...json({ record: chemicalRecord('fuel') }, bearer('brink_guessed')) })).json().error).toBe('invalid-token');
    expect(await chemicals(app)).toBe(before);
    expect((await app.inject({ method: 'GET', url: '/api/species/ptj-1um-b07' })).statusCode).toBe(200);
  });

  it('with a valid token the write passes; the holder is the author and the author given goes into the note', async () => {
    const r = await app.inject({ method: 'POST', url: '/api/chemicals', ...json({ record: chemicalRecord('fuel'), author: 'someone else (invented)', note: 'new stock' }, bearer(ada)) });
    expect(r.statusCode).toBe(201);
    expect(r.json()).toMatchObject({ author: 'Ada (invented)', note: 'new stock; author given: someone else (invented)' });
    // no author given: the holder, the note as sent
    const e = await app.inject({ method: 'PUT', url: '/api/chemicals/fuel', ...json({ baseRevision: 1, record: chemicalRecord('fuel', '1.5e-9 m^2/s') }, bearer(bo)) });
    expect(e.json()).toMatchObject({ revision: 2, author: 'Bo (invented)', note: null });
    // the holder's own name given: nothing added
    const rt = await app.inject({ method: 'POST', url: '/api/chemicals/fuel/retire', ...json({ author: 'Ada (invented)' }, bearer(ada)) });
    expect(rt.json()).toMatchObject({ action: 'retire', author: 'Ada (invented)', note: null });
    // a token makes a body-less action a write of its own: nothing a foreign page can send
    const rs = await app.inject({ method: 'POST', url: '/api/chemicals/fuel/restore', headers: bearer(bo) });
    expect(rs.statusCode).toBe(200);
    expect(rs.json()).toMatchObject({ action: 'restore', author: 'Bo (invented)' });
    const history = (await app.inject({ method: 'GET', url: '/api/chemicals/fuel/revisions' })).json().revisions.map((x: { author: string }) => x.author);
    expect(history).toEqual(['Ada (invented)', 'Bo (invented)', 'Ada (invented)', 'Bo (invented)']);
  });

  it('species, hazards, import, measurements and their application record the holder too', async () => {
    const sp = await app.inject({ method: 'POST', url: '/api/species', ...json({ record: speciesRecord('bead'), author: 'x (invented)' }, bearer(ada)) });
    expect(sp.json()).toMatchObject({ author: 'Ada (invented)', note: 'author given: x (invented)' });

    const hz = (await app.inject({ method: 'GET', url: '/api/species/catalase-e3/hazards' })).json();
    const put = await app.inject({ method: 'PUT', url: '/api/species/catalase-e3/hazards', ...json({ baseVersion: hz.current.version, hazards: { ...hz.current.body, storage: 'freezer (invented)' }, author: 'safety officer (invented)' }, bearer(bo)) });
    expect(put.statusCode).toBe(200);
    expect(put.json()).toMatchObject({ author: 'Bo (invented)', note: 'author given: safety officer (invented)' });

    const doc = (await app.inject({ method: 'GET', url: '/api/shelf/export' })).json();
    doc.chemicals.find((c: { id: string }) => c.id === 'h2o2').name = 'hydrogen peroxide, renamed (invented)';
    const imp = await app.inject({ method: 'POST', url: '/api/shelf/import?author=importer%20(invented)', ...json(doc, bearer(ada)) });
    expect(imp.json()).toMatchObject({ revised: 1 });
    expect((await app.inject({ method: 'GET', url: '/api/chemicals/h2o2' })).json()).toMatchObject({ action: 'import', author: 'Ada (invented)', note: 'shelf import; author given: importer (invented)' });

    const csv = 'lag [s],msd [um^2]\n0.1,0.092\n0.2,0.175\n0.5,0.44\n1,0.90\n2,1.77\n5,4.41\n';
    const m = await app.inject({ method: 'POST', url: '/api/species/ptj-1um-b07/measurements', ...json({ method: 'msd', data: csv, author: 'a student (invented)' }, bearer(bo)) });
    expect(m.statusCode).toBe(201);
    expect(m.json()).toMatchObject({ author: 'Bo (invented)', note: 'author given: a student (invented)' });
    const cur = (await app.inject({ method: 'GET', url: '/api/species/ptj-1um-b07' })).json();
    const ap = await app.inject({ method: 'POST', url: `/api/measurements/${m.json().id}/apply`, ...json({ baseRevision: cur.revision, author: 'a student (invented)' }, bearer(ada)) });
    expect(ap.statusCode).toBe(200);
    expect(ap.json().author).toBe('Ada (invented)');
    expect(ap.json().note).toMatch(/^applied measurement \d+ \(msd\).*; author given: a student \(invented\)$/);
  });

  it("a plan's author is the holder (the author given goes into its notes); a rerun's is its own holder", async () => {
    const req = { base: [{ id: 'ptj-1um-b09', volumeFraction: '0.1 percent' }], chemicals: { h2o2: '200 mM' }, chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' }, boundary: 'stationary', candidates: ['ptj-1um-b07'], author: 'x (invented)', notes: 'first try' };
    const withToken = (t: string) => ({ inject: (o: { method: 'GET' | 'POST' | 'DELETE'; url: string; payload?: unknown }) => app.inject({ ...o, payload: o.payload as object, headers: bearer(t) }) });
    expect((await postPlan(app, req)).statusCode).toBe(401);
    const p = await postPlan(withToken(ada), req);
    expect(p.statusCode).toBe(201);
    expect(p.json()).toMatchObject({ author: 'Ada (invented)', notes: 'first try\nauthor given: x (invented)' });
    // a rerun with a token needs no body (the helper sends {}; here none at all)
    const bare = await app.inject({ method: 'POST', url: `/api/plans/${p.json().id}/rerun`, headers: bearer(bo) });
    expect(bare.statusCode).toBe(202);
    expect((await app.inject({ method: 'DELETE', url: `/api/jobs/${bare.json().id}`, headers: bearer(bo) })).statusCode).toBe(200);
    const again = await postPlan(withToken(bo), undefined, `/api/plans/${p.json().id}/rerun`);
    expect(again.statusCode).toBe(201);
    expect(again.json()).toMatchObject({ author: 'Bo (invented)', rerunOf: p.json().id, notes: 'first try' });

    // a new name is a revision of the plan's text: its author is the holder, not the name given
    const id = p.json().id;
    expect((await app.inject({ method: 'PATCH', url: `/api/plans/${id}`, ...json({ baseRevision: 1, name: 'renamed' }) })).statusCode).toBe(401);
    const patched = await app.inject({ method: 'PATCH', url: `/api/plans/${id}`, ...json({ baseRevision: 1, name: 'renamed', author: 'x (invented)' }, bearer(bo)) });
    expect(patched.statusCode).toBe(200);
    expect(patched.json().history.at(-1)).toMatchObject({ revision: 2, name: 'renamed', author: 'Bo (invented)', note: 'author given: x (invented)' });

    // what the tubes did: the outcome set's author is the holder, the author given goes into its note
    const tubes = [{ tube: 'C0a', state: 'stable' }];
    expect((await app.inject({ method: 'POST', url: `/api/plans/${id}/outcomes`, ...json({ tubes }) })).statusCode).toBe(401);
    const out = await app.inject({ method: 'POST', url: `/api/plans/${id}/outcomes`, ...json({ tubes, author: 'a student (invented)', note: 'day 1' }, bearer(ada)) });
    expect(out.statusCode).toBe(201);
    expect(out.json()).toMatchObject({ author: 'Ada (invented)', note: 'day 1; author given: a student (invented)' });
    // with a token an action needs no body: the update starts (found in review: a 400 "expected object, received null")
    const upd = await app.inject({ method: 'POST', url: `/api/plans/${id}/update`, headers: bearer(ada) });
    expect(upd.statusCode, upd.body).toBe(202);
    await app.inject({ method: 'DELETE', url: `/api/jobs/${upd.json().id}`, headers: bearer(ada) });
  });

  it('a revoked token is refused from then on; when none is left active the loopback service is open again', async () => {
    const tokens = tokensRepository(app.db);
    const t = tokens.create('Cy (invented)');
    expect((await app.inject({ method: 'POST', url: '/api/chemicals', ...json({ record: chemicalRecord('c1') }, bearer(t.secret)) })).statusCode).toBe(201);
    tokens.revoke(t.token.prefix);
    const r = await app.inject({ method: 'POST', url: '/api/chemicals', ...json({ record: chemicalRecord('c2') }, bearer(t.secret)) });
    expect(r.statusCode).toBe(401);
    expect(r.json()).toMatchObject({ error: 'revoked-token' });
    expect(r.json().message).toMatch(/revoked at \d{4}-/);
    // a revoked token is refused for reads too
    expect((await app.inject({ method: 'GET', url: '/api/health', headers: bearer(t.secret) })).statusCode).toBe(401);
    tokens.revoke(ada);
    tokens.revoke('2'); // bo, by id
    expect(tokens.activeCount()).toBe(0);
    expect((await app.inject({ method: 'POST', url: '/api/chemicals', ...json({ record: chemicalRecord('c3') }) })).statusCode).toBe(201);
  });
});

describe('the settings: tokens required without any, reads too, other host names', () => {
  it('requireToken: writes need a token while the database holds none (all writes refused)', async () => {
    const app = await appWith({ requireToken: true });
    expect((await app.inject({ method: 'POST', url: '/api/chemicals', ...json({ record: chemicalRecord('fuel') }) })).statusCode).toBe(401);
    expect((await app.inject({ method: 'GET', url: '/api/chemicals' })).statusCode).toBe(200);
    await app.close();
  });

  it('tokenForReads: every API read needs a token; the pages, their files and the API reference do not', async () => {
    const app = await appWith({ tokenForReads: true }, true);
    const secret = tokensRepository(app.db).create('Ada (invented)').secret;
    for (const url of ['/api/species', '/api/chemicals/h2o2', '/api/health', '/api/plans', '/api/jobs', '/api/shelf/export', '/api/species/catalase-e3/hazards']) {
      const r = await app.inject({ method: 'GET', url });
      expect(r.statusCode, url).toBe(401);
      expect(r.json().error).toBe('token-required');
      expect((await app.inject({ method: 'GET', url, headers: bearer(secret) })).statusCode, url).toBe(200);
    }
    // the router decodes the path: an encoded /api is the API all the same
    for (const url of ['/%61pi/species', '/api/%73pecies', '/api/species/', '/api/species?x=/api/docs']) expect((await app.inject({ method: 'GET', url })).statusCode, url).toBe(401);
    for (const url of ['/', '/planner', '/calibrate', '/favicon.svg', '/api/docs/json']) {
      expect((await app.inject({ method: 'GET', url })).statusCode, url).toBe(200);
    }
    await app.close();
  });

  it('allowedHosts adds names (any port, or the one given); "*" serves any Host', async () => {
    const app = await appWith({ allowedHosts: ['brink.lab.example', '10.0.0.5:3080'] });
    const status = async (host: string) => (await app.inject({ method: 'GET', url: '/api/health', headers: { host } })).statusCode;
    expect(await status('brink.lab.example')).toBe(200);
    expect(await status('BRINK.lab.example:8443')).toBe(200);
    expect(await status('10.0.0.5:3080')).toBe(200);
    expect(await status('10.0.0.5:3081')).toBe(421);
    expect(await status('10.0.0.5')).toBe(421);
    expect(await status('evil.example')).toBe(421);
    expect(await status('localhost')).toBe(200);
    // an allowed name is an allowed Origin of writes
    expect((await app.inject({ method: 'POST', url: '/api/chemicals', ...json({ record: chemicalRecord('f') }, { origin: 'https://brink.lab.example' }) })).statusCode).toBe(201);
    await app.close();
    const any = await appWith({ allowedHosts: '*' });
    expect((await any.inject({ method: 'GET', url: '/api/health', headers: { host: 'whatever.example' } })).statusCode).toBe(200);
    await any.close();
    await expect(appWith({ allowedHosts: ['not a host'] })).rejects.toThrow(/not a host name/);
  });

  it('listening, the loopback names are served at any port (the name is what a rebinding page cannot fake), other names are not', async () => {
    const app = await appWith();
    await app.listen({ port: 0, host: '127.0.0.1' });
    const port = (app.server.address() as { port: number }).port;
    const get = (host: string) =>
      new Promise<number>((resolve, reject) => {
        const rq = httpRequest({ host: '127.0.0.1', port, path: '/api/health', headers: { host } }, (res) => {
          res.resume();
          resolve(res.statusCode!);
        });
        rq.on('error', reject);
        rq.end();
      });
    expect(await get(`127.0.0.1:${port}`)).toBe(200);
    expect(await get(`localhost:${port}`)).toBe(200);
    expect(await get(`localhost:${port === 65535 ? port - 1 : port + 1}`)).toBe(200);
    expect(await get(`attacker.example:${port}`)).toBe(421);
    await app.close();
  });
});

describe('the helpers', () => {
  it('isLoopback: 127.0.0.0/8, ::1 and localhost only', () => {
    for (const h of ['127.0.0.1', '127.1.2.3', 'localhost', '::1', '[::1]', '::ffff:127.0.0.1', 'LOCALHOST']) expect(isLoopback(h), h).toBe(true);
    for (const h of ['0.0.0.0', '::', '10.0.0.5', '192.168.1.20', 'brink.lab.example', '128.0.0.1', '127.0.0.256', 'localhost.example', '::ffff:10.0.0.1']) expect(isLoopback(h), h).toBe(false);
  });
  it('parseHost reads names, IPv6 in brackets and ports, and refuses the rest', () => {
    expect(parseHost('LocalHost:3080')).toEqual({ name: 'localhost', port: 3080 });
    expect(parseHost('[::1]:80')).toEqual({ name: '[::1]', port: 80 });
    expect(parseHost('brink.lab')).toEqual({ name: 'brink.lab', port: null });
    for (const bad of ['', 'a b', 'x:99999', 'user@host', '::1', 'a/b']) expect(parseHost(bad), bad).toBeNull();
  });
});

describe('the token table (migration 0009)', () => {
  it('keeps the SHA-256 of the secret, never the secret', () => {
    // FIPS 180-2, appendix B.1: SHA-256("abc")
    expect(hashToken('abc')).toBe('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad');
    const db = openDatabase(':memory:');
    const { secret, token } = tokensRepository(db).create('Ada (invented)');
    expect(secret).toMatch(/^brink_[A-Za-z0-9_-]{43}$/);
    expect(token.prefix).toBe(secret.slice(0, 12));
    const row = db.prepare('SELECT * FROM access_tokens').get() as Record<string, unknown>;
    expect(row.hash).toBe(hashToken(secret));
    expect(JSON.stringify(row)).not.toContain(secret.slice(12));
    db.close();
  });

  it('revocation is the only change: no other update, no un-revoking, no delete, no replacing insert', () => {
    const db = openDatabase(':memory:');
    const tokens = tokensRepository(db);
    const { token } = tokens.create('Ada (invented)');
    const evil = hashToken('brink_forged');
    expect(() => db.prepare('UPDATE access_tokens SET holder = ? WHERE id = ?').run('Mallory (invented)', token.id)).toThrow(/immutable/);
    expect(() => db.prepare('UPDATE access_tokens SET hash = ? WHERE id = ?').run(evil, token.id)).toThrow(/immutable/);
    expect(() => db.prepare('UPDATE access_tokens SET revoked_at = NULL WHERE id = ?').run(token.id)).toThrow(/immutable/);
    expect(() => db.prepare('DELETE FROM access_tokens WHERE id = ?').run(token.id)).toThrow(/never deleted/);
    expect(() => db.prepare("INSERT OR REPLACE INTO access_tokens (id, holder, prefix, hash, created_at) VALUES (?, 'Mallory (invented)', 'brink_forged', ?, '2026-01-01')").run(token.id, evil)).toThrow(/immutable/);
    expect(() => db.prepare("REPLACE INTO access_tokens (id, holder, prefix, hash, created_at) VALUES (?, 'Mallory (invented)', ?, ?, '2026-01-01')").run(99, token.prefix, evil)).toThrow(/immutable/);
    tokens.revoke(String(token.id));
    expect(() => db.prepare("UPDATE access_tokens SET revoked_at = '2030-01-01' WHERE id = ?").run(token.id)).toThrow(/immutable/);
    expect(() => tokens.revoke(token.prefix)).toThrow(/already revoked/);
    expect(() => tokens.revoke('brink_nothing')).toThrow(/no token/);
    expect(tokens.list()).toEqual([expect.objectContaining({ holder: 'Ada (invented)', revokedAt: expect.any(String) })]);
    db.close();
  });
});
