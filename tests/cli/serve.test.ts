/**
 * `brink serve` and `brink seed` as real processes: the service creates its
 * database, seeds the demo shelf on the first run only, prints its URL, serves
 * the shelf and stops cleanly on SIGTERM. Traffic goes to 127.0.0.1 only.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { bin, startServer } from '../helpers/serve.js';

// the service as a child process: the same helper as the crash, race and backup tests
describe('brink serve', () => {
  it('creates the database, seeds once, serves the demo shelf, shuts down on SIGTERM', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'brink-serve-'));
    const db = join(dir, 'nested', 'brink.sqlite');
    const s1 = await startServer(db);
    expect(existsSync(db)).toBe(true);
    expect(s1.output()).toMatch(/loaded the demo shelf/);
    const list = (await (await fetch(`${s1.url}api/species?limit=100`)).json()) as { total: number; items: { id: string }[] };
    expect(list.total).toBeGreaterThanOrEqual(6);
    expect(list.items.map((i) => i.id)).toContain('ptj-1um-b07');
    const bad = await fetch(`${s1.url}api/species`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ record: { id: 'x', name: 'x', kind: 'colloid', diffusivity: '3 mM', radius: '1 um' } }) });
    expect(bad.status).toBe(400);
    expect(((await bad.json()) as { message: string }).message).toMatch(/^record\.diffusivity: expected length\^2\/time/);
    expect(await s1.stop()).toBe(0);

    const s2 = await startServer(db);
    expect(s2.output()).not.toMatch(/loaded the demo shelf/);
    const again = (await (await fetch(`${s2.url}api/species/ptj-1um-b07`)).json()) as { revision: number };
    expect(again.revision).toBe(1);
    expect(await s2.stop()).toBe(0);
  }, 90_000);

  it('seed --reset asks, and without a terminal refuses unless --yes', () => {
    const dir = mkdtempSync(join(tmpdir(), 'brink-seed-'));
    const db = join(dir, 'b.sqlite');
    const first = spawnSync(process.execPath, [bin, 'seed', '--db', db], { encoding: 'utf8' });
    expect(first.status).toBe(0);
    expect(first.stdout).toMatch(/11 created/);
    const refused = spawnSync(process.execPath, [bin, 'seed', '--reset', '--db', db], { encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'] });
    expect(refused.status).toBe(2);
    expect(refused.stderr).toMatch(/refusing to reset without --yes/);
    const reset = spawnSync(process.execPath, [bin, 'seed', '--reset', '--yes', '--db', db], { encoding: 'utf8' });
    expect(reset.status).toBe(0);
    expect(reset.stdout).toMatch(/11 created, 0 revised/);
    const plain = spawnSync(process.execPath, [bin, 'seed', '--db', db], { encoding: 'utf8' });
    expect(plain.stdout).toMatch(/0 created, 0 revised, 11 unchanged/);
  }, 90_000);

  it('a bad port is a usage error', () => {
    const p = spawnSync(process.execPath, [bin, 'serve', '--port', 'eighty'], { encoding: 'utf8' });
    expect(p.status).toBe(2);
    expect(p.stderr).toMatch(/--port: expected an integer/);
  }, 30_000);
});
