/**
 * Access from the command line, as real processes: `brink token create/list/revoke`, and `brink serve`
 * refusing to listen beyond loopback (--host 0.0.0.0) without access control, starting with a token
 * or --require-token, and then asking for the token. Traffic goes to 127.0.0.1 only.
 */
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';

const root = new URL('../../', import.meta.url).pathname;
const bin = join(root, 'bin/brink.js');
const brink = (args: string[], env: Record<string, string> = {}) => spawnSync(process.execPath, [bin, ...args], { encoding: 'utf8', env: { ...process.env, ...env } });
const tmpDb = () => join(mkdtempSync(join(tmpdir(), 'brink-access-')), 'brink.sqlite');

/** `brink serve` until it prints its URL: the port, its output, and a stop that answers the exit code. */
function startServer(args: string[], env: Record<string, string> = {}): Promise<{ port: number; output: () => string; stop: () => Promise<number | null> }> {
  return new Promise((resolve, reject) => {
    const p = spawn(process.execPath, [bin, 'serve', '--port', '0', ...args], { stdio: ['ignore', 'pipe', 'pipe'], env: { ...process.env, ...env } });
    let out = '';
    const timer = setTimeout(() => {
      p.kill('SIGKILL');
      reject(new Error(`no URL printed: ${out}`));
    }, 30_000);
    const onData = (d: Buffer) => {
      out += d.toString();
      const m = /serving the shelf at http:\/\/[^\s]*:(\d+)\/[\s\S]*access: .*\n/.exec(out);
      if (m) {
        clearTimeout(timer);
        resolve({
          port: Number(m[1]),
          output: () => out,
          stop: () =>
            new Promise((res) => {
              p.once('exit', (code) => res(code));
              p.kill('SIGTERM');
            }),
        });
      }
    };
    p.stdout.on('data', onData);
    p.stderr.on('data', onData);
    p.once('exit', (code) => {
      clearTimeout(timer);
      reject(new Error(`exited ${code}: ${out}`));
    });
  });
}

const post = (port: number, headers: Record<string, string> = {}, id = 'fuel') =>
  fetch(`http://127.0.0.1:${port}/api/chemicals`, {
    method: 'POST',
    headers: { 'content-type': 'application/json', ...headers },
    body: JSON.stringify({ record: { id, name: `chemical ${id}`, diffusivity: '1.4e-9 m^2/s', lossRate: '0 1/s' }, author: 'someone (invented)' }),
  });

describe('brink token', () => {
  it('create prints the secret once (stdout alone), list shows prefix and holder but never the secret, revoke by prefix or id', () => {
    const db = tmpDb();
    expect(brink(['token', 'list', '--db', db]).status).toBe(2); // no database yet
    const c = brink(['token', 'create', 'Ada (invented)', '--db', db]);
    expect(c.status).toBe(0);
    const secret = c.stdout.trim();
    expect(secret).toMatch(/^brink_[A-Za-z0-9_-]{43}$/);
    expect(c.stderr).toMatch(/only time the secret is shown/);
    expect(c.stderr).toMatch(/Authorization: Bearer/);
    const second = brink(['token', 'create', 'Bo (invented)', '--db', db]).stdout.trim();
    expect(second).not.toBe(secret);
    const list = brink(['token', 'list', '--db', db]);
    expect(list.status).toBe(0);
    expect(list.stdout).toContain(`${secret.slice(0, 12)}…`);
    expect(list.stdout).toMatch(/Ada \(invented\)/);
    expect(list.stdout).not.toContain(secret);
    expect(list.stdout).not.toContain(second);
    // nor does the database file hold either secret
    const file = readFileSync(db).toString('latin1') + (() => { try { return readFileSync(`${db}-wal`).toString('latin1'); } catch { return ''; } })();
    expect(file).not.toContain(secret.slice(12));
    expect(file).not.toContain(second.slice(12));

    const r = brink(['token', 'revoke', secret.slice(0, 12), '--db', db]);
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/^revoked token 1 \(brink_.{6}…, Ada \(invented\)\) at \d{4}-/);
    const again = brink(['token', 'revoke', '1', '--db', db]);
    expect(again.status).toBe(2);
    expect(again.stderr).toMatch(/already revoked/);
    expect(brink(['token', 'revoke', 'brink_nothing', '--db', db]).status).toBe(2);
    const json = JSON.parse(brink(['token', 'list', '--db', db, '--format', 'json']).stdout) as { id: number; holder: string; revokedAt: string | null }[];
    expect(json.map((t) => [t.id, t.holder, t.revokedAt === null])).toEqual([
      [1, 'Ada (invented)', false],
      [2, 'Bo (invented)', true],
    ]);
    expect(brink(['token', 'create', '--db', db]).status).toBe(2); // no holder
    expect(brink(['token', 'create', '   ', '--db', db]).status).toBe(2);
    expect(brink(['token', 'frobnicate', '--db', db]).status).toBe(2);
  }, 180_000);
});

describe('brink serve and access', () => {
  it('refuses to listen on 0.0.0.0 without access control: exit 2, a clear message, nothing served', () => {
    const db = tmpDb();
    const p = spawnSync(process.execPath, [bin, 'serve', '--db', db, '--port', '0', '--host', '0.0.0.0'], { encoding: 'utf8', timeout: 30_000 });
    expect(p.status).toBe(2);
    expect(p.stderr).toMatch(/refusing to listen on 0\.0\.0\.0.*without access control/);
    expect(p.stderr).toMatch(/brink token create/);
    expect(p.stdout).not.toMatch(/serving the shelf/);
    // refused before anything is made: no database file appears (found in a walk-through)
    expect(existsSync(db)).toBe(false);
    // a revoked token is no access control either
    const t = brink(['token', 'create', 'Ada (invented)', '--db', db]).stdout.trim();
    brink(['token', 'revoke', t, '--db', db]);
    const again = spawnSync(process.execPath, [bin, 'serve', '--db', db, '--port', '0', '--host', '::'], { encoding: 'utf8', timeout: 30_000 });
    expect(again.status).toBe(2);
    expect(again.stderr).toMatch(/refusing to listen on ::/);
  }, 60_000);

  it('with a token it starts on 0.0.0.0; writes need the token, and its holder is the author', async () => {
    const db = tmpDb();
    const secret = brink(['token', 'create', 'Ada (invented)', '--db', db]).stdout.trim();
    const s = await startServer(['--db', db, '--host', '0.0.0.0']);
    try {
      expect(s.output()).toMatch(/access: a token is required for writes \(1 active\)/);
      // a lab's database gets no invented demo shelf unless asked (--demo)
      expect(s.output()).toMatch(/demo shelf is not loaded/);
      expect((await fetch(`http://127.0.0.1:${s.port}/api/species/ptj-1um-b07`)).status).toBe(404);
      const none = await post(s.port);
      expect(none.status).toBe(401);
      const ok = await post(s.port, { authorization: `Bearer ${secret}` });
      expect(ok.status).toBe(201);
      expect(await ok.json()).toMatchObject({ author: 'Ada (invented)', note: 'author given: someone (invented)' });
      // a token revoked while the service runs is refused at once, and the service does not open up
      expect(brink(['token', 'revoke', '1', '--db', db]).status).toBe(0);
      expect((await post(s.port, { authorization: `Bearer ${secret}` }, 'fuel2')).status).toBe(401);
      expect((await post(s.port, {}, 'fuel3')).status).toBe(401);
      expect((await fetch(`http://127.0.0.1:${s.port}/api/chemicals/fuel`)).status).toBe(200);
    } finally {
      expect(await s.stop()).toBe(0);
    }
  }, 90_000);

  it('--require-token starts beyond loopback without tokens (writes wait for one); reads need one with BRINK_REQUIRE_TOKEN_FOR_READS', async () => {
    const db = tmpDb();
    const s = await startServer(['--db', db, '--host', '0.0.0.0', '--require-token']);
    try {
      expect((await post(s.port)).status).toBe(401);
      // a token created while it runs is accepted at once
      const secret = brink(['token', 'create', 'Bo (invented)', '--db', db]).stdout.trim();
      expect((await post(s.port, { authorization: `Bearer ${secret}` })).status).toBe(201);
    } finally {
      expect(await s.stop()).toBe(0);
    }
    const r = await startServer(['--db', db, '--host', '127.0.0.1'], { BRINK_REQUIRE_TOKEN_FOR_READS: '1' });
    try {
      expect(r.output()).toMatch(/required for writes and reads/);
      expect((await fetch(`http://127.0.0.1:${r.port}/api/chemicals`)).status).toBe(401);
      expect((await fetch(`http://127.0.0.1:${r.port}/`)).status).toBe(200);
    } finally {
      expect(await r.stop()).toBe(0);
    }
  }, 90_000);

  it('on loopback without tokens it stays open; --allowed-hosts adds names', async () => {
    const db = tmpDb();
    const s = await startServer(['--db', db, '--host', '127.0.0.1', '--allowed-hosts', 'brink.lab.example']);
    try {
      expect(s.output()).toMatch(/access: open to this machine .*host names served: localhost, 127\.0\.0\.1, \[::1\], brink\.lab\.example/);
      expect((await post(s.port)).status).toBe(201);
    } finally {
      expect(await s.stop()).toBe(0);
    }
  }, 90_000);
});
