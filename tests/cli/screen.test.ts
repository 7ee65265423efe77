/** `brink screen` works from a file, without a database, and keeps its output contract. */
import { join } from 'node:path';
import { readFileSync, writeFileSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { describe, expect, it } from 'vitest';
import { main } from '../../server/cli.js';

const file = new URL('../../seeds/screens/washed-janus.json', import.meta.url).pathname;
async function run(args: string[]) {
  let out = '';
  let err = '';
  const code = await main(args, { out: (t) => (out += t), err: (t) => (err += t) });
  return { code, out, err };
}

describe('brink screen', () => {
  it('ranks the example candidates and explains the ones that cannot work', async () => {
    const r = await run(['screen', file]);
    expect(r.err).toBe('');
    expect(r.code).toBe(0);
    const out = JSON.parse(r.out);
    const c = out.candidates;
    expect(c.map((x: { species: string }) => x.species)).toEqual(['ptj-swim-0.5-s02', 'ptj-1um-b07', 'catb-0.22-l04', 'silica-1um-t01']);
    for (const x of c.slice(0, 2)) {
      expect(x.feasible).toBe(true);
      expect(x.reason).toBeNull();
      expect(x.threshold.density).toBeGreaterThan(0);
      expect(x.threshold.p05).toBeLessThanOrEqual(x.threshold.median);
      expect(x.threshold.median).toBeLessThanOrEqual(x.threshold.p95);
      expect(x.atMargin.state).toBe('stationary');
      expect(x.window).toBeNull();
    }
    expect(c[2]).toMatchObject({ feasible: false, reason: 'wrong-sign', threshold: null, atMargin: null });
    expect(c[3]).toMatchObject({ feasible: false, reason: 'no-coupling' });
    // same seed, same numbers
    expect(JSON.parse((await run(['screen', file])).out)).toEqual(out);
  }, 60_000);

  it('bad requests exit 2 naming the field', async () => {
    const doc = JSON.parse(readFileSync(file, 'utf8'));
    doc.candidates[0].couplings[0].chemical = 'nope';
    doc.boundary = 'up';
    const p = join(mkdtempSync(join(tmpdir(), 'brink-screen-')), 'r.json');
    writeFileSync(p, JSON.stringify(doc));
    const r = await run(['screen', p]);
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/boundary: Invalid option/);
    expect(r.err).not.toMatch(/\n\s+at /);
  });
});
