/** `brink seed` on a shelf whose demo items were edited: it stops (exit 2) instead of undoing the edits. */
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { main } from '../../server/cli.js';
import { openDatabase } from '../../server/store/db.js';
import { shelfRepository } from '../../server/store/shelf.js';

describe('brink seed over edited demo items', () => {
  it('lists the edited items and writes nothing', async () => {
    const db = join(mkdtempSync(join(tmpdir(), 'brink-seed-conflict-')), 'b.sqlite');
    let out = '';
    let err = '';
    const io = { out: (t: string) => void (out += t), err: (t: string) => void (err += t) };
    expect(await main(['seed', '--db', db], io)).toBe(0);
    const d = openDatabase(db);
    const repo = shelfRepository(d);
    const cur = repo.mustGet<Record<string, unknown>>('species', 'ptj-1um-b07');
    repo.edit('species', 'ptj-1um-b07', 1, { kind: cur.kind, name: 'renamed by a colleague', record: { ...cur.record, name: 'renamed by a colleague' } });
    d.close();
    out = '';
    expect(await main(['seed', '--db', db], io)).toBe(2);
    expect(err).toMatch(/species "ptj-1um-b07"\) differs from the shelf's revision 2 and carries no exported revision/);
    expect(err).toMatch(/overwrite=true/);
    const after = openDatabase(db);
    expect(shelfRepository(after).mustGet('species', 'ptj-1um-b07')).toMatchObject({ revision: 2, name: 'renamed by a colleague' });
    after.close();
  });
});
