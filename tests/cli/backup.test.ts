/**
 * `brink backup` while `brink serve` runs and writes go on, then `brink restore`: refused while the
 * service has the file open, then done with the old file kept and the service serving the backup.
 */
import Database from 'better-sqlite3';
import { execFile } from 'node:child_process';
import { existsSync, mkdtempSync, readdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { describe, expect, it } from 'vitest';
import { bin, call, markedSpecies, startServer } from '../helpers/serve.js';

const run = promisify(execFile);
async function brink(args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  try {
    const r = await run(process.execPath, [bin, ...args], { encoding: 'utf8' });
    return { code: 0, stdout: r.stdout, stderr: r.stderr };
  } catch (e) {
    const x = e as { code: number; stdout: string; stderr: string };
    return { code: x.code, stdout: x.stdout, stderr: x.stderr };
  }
}

const speciesIn = (path: string) => {
  const db = new Database(path, { readonly: true });
  try {
    expect(db.pragma('integrity_check', { simple: true })).toBe('ok');
    return new Set((db.prepare("SELECT key FROM shelf_items WHERE type = 'species' AND key LIKE 'bk-%'").all() as { key: string }[]).map((r) => r.key));
  } finally {
    db.close();
  }
};

describe('backup and restore', () => {
  it('backs up while the service writes; restore is refused while it runs, then keeps the old file', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'brink-backup-'));
    const dbPath = join(dir, 'brink.sqlite');
    const backup = join(dir, 'monday.sqlite');
    const s = await startServer(dbPath);
    const acked: string[] = [];
    let writing = true;
    let n = 0;
    const writer = async (w: number) => {
      while (writing) {
        const id = `bk-${w}-${n++}`;
        const r = await call(`${s.url}api/species`, 'POST', { record: markedSpecies(id, id) });
        expect(r.status).toBe(201);
        acked.push(id);
      }
    };
    const writers = [0, 1, 2].map(writer);
    await new Promise((res) => setTimeout(res, 300));
    const before = [...acked];
    const b = await brink(['backup', backup, '--db', dbPath]);
    const duringBackup = acked.length - before.length;
    writing = false;
    await Promise.all(writers);
    expect(b.stderr).toBe('');
    expect(b.code).toBe(0);
    expect(b.stdout).toMatch(/^backed up .* integrity ok; \d+ species/);
    // the backup is whole and holds at least every write acknowledged before it started
    const inBackup = speciesIn(backup);
    for (const id of before) expect(inBackup.has(id), id).toBe(true);
    expect(inBackup.size).toBeLessThanOrEqual(acked.length);
    expect(duringBackup).toBeGreaterThan(0); // writes went on while the backup ran
    expect(readdirSync(dir).filter((f) => f.includes('.partial-'))).toEqual([]);

    // the service still has the file open: restore is refused, nothing changes
    const refused = await brink(['restore', backup, '--db', dbPath, '--yes']);
    expect(refused.code).toBe(2);
    expect(refused.stderr).toMatch(/in use by another process \(is brink serve running on it\?\)/);
    expect((await call(`${s.url}api/species/${acked[acked.length - 1]}`, 'GET')).status).toBe(200);
    expect(await s.stop()).toBe(0);
    const all = speciesIn(dbPath);
    expect(all.size).toBe(acked.length);

    // without a terminal and without --yes: refused
    const unasked = await brink(['restore', backup, '--db', dbPath]);
    expect(unasked.code).toBe(2);
    expect(unasked.stderr).toMatch(/refusing to restore without --yes/);

    const done = await brink(['restore', backup, '--db', dbPath, '--yes']);
    expect(done.stderr).toBe('');
    expect(done.code).toBe(0);
    const kept = /kept as (\S+)$/m.exec(done.stdout)?.[1];
    expect(kept).toMatch(/brink\.sqlite\.before-restore-\d{4}-\d\d-\d\dT\d\d-\d\d-\d\dZ$/);
    expect(existsSync(`${dbPath}-wal`)).toBe(false);
    // the old file, whole and with every write; the restored one, the backup's content
    expect(speciesIn(kept!)).toEqual(all);
    expect(speciesIn(dbPath)).toEqual(inBackup);

    const again = await startServer(dbPath);
    const list = (await call(`${again.url}api/species?limit=500`, 'GET')).json as { total: number };
    expect(list.total).toBe(inBackup.size + 8); // and the 8 demo species
    expect(again.output()).not.toMatch(/loaded the demo shelf/);
    expect(await again.stop()).toBe(0);
  }, 240_000);
});
