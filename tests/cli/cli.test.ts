/**
 * The command line: `brink analyze` on every example prints the JSON contract
 * and the state the examples README promises; bad input exits 2 naming the
 * field, never with a stack trace.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { main } from '../../server/cli.js';

const root = new URL('../../', import.meta.url).pathname;
const examples = join(root, 'seeds/examples');

async function run(args: string[]) {
  let out = '';
  let err = '';
  const code = await main(args, { out: (t) => (out += t), err: (t) => (err += t) });
  return { code, out, err };
}

/** The states promised in seeds/examples/README.md, read from its table. */
function promisedStates(): Record<string, string> {
  const text = readFileSync(join(examples, 'README.md'), 'utf8');
  const out: Record<string, string> = {};
  for (const m of text.matchAll(/^\|\s*`([^`]+\.json)`\s*\|\s*`(stable|stationary|oscillatory)`/gm)) out[m[1]!] = m[2]!;
  return out;
}

describe('brink analyze', () => {
  const promised = promisedStates();

  it('the examples README promises a state for at least one stable, stationary and oscillatory file', () => {
    expect(new Set(Object.values(promised))).toEqual(new Set(['stable', 'stationary', 'oscillatory']));
  });

  for (const [file, state] of Object.entries(promised)) {
    it(`${file} → ${state}, with the contract's fields in SI`, async () => {
      const { code, out, err } = await run(['analyze', join(examples, file)]);
      expect(err).toBe('');
      expect(code).toBe(0);
      const r = JSON.parse(out);
      expect(r.state).toBe(state);
      expect(typeof r.growthRate).toBe('number');
      if (state === 'stable') {
        expect(r.growthRate).toBeLessThan(0);
        expect(r.growthTime).toBeNull();
      } else {
        expect(r.growthTime).toBeCloseTo(1 / r.growthRate, 9);
      }
      expect(Object.keys(r.fastestMode).sort()).toEqual(['index', 'oscillationPeriod', 'wavelength', 'wavenumber']);
      expect(r.fastestMode.oscillationPeriod === null).toBe(state !== 'oscillatory');
      if (r.fastestMode.wavelength !== null) expect(r.fastestMode.wavelength).toBeCloseTo((2 * Math.PI) / r.fastestMode.wavenumber, 12);
      expect(Math.max(...r.composition.map((c: { weight: number }) => Math.abs(c.weight)))).toBeCloseTo(1, 12);
      expect(r.criteria).toBeTypeOf('object');
      for (const w of r.warnings) {
        expect(typeof w.code).toBe('string');
        expect(typeof w.message).toBe('string');
      }
    });
  }

  it('--format text prints a short summary', async () => {
    const { code, out } = await run(['analyze', join(examples, 'stationary-janus-clusters.json'), '--format', 'text']);
    expect(code).toBe(0);
    expect(out).toMatch(/^state: +stationary, growth time /);
    expect(out).toMatch(/fastest mode: mode n = 1, wavelength 4 mm/);
    expect(out.split('\n').length).toBeLessThan(25);
  });

  it('bad input exits 2 with the field named and no stack trace', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'brink-cli-'));
    const bad = join(dir, 'bad.json');
    const doc = JSON.parse(readFileSync(join(examples, 'stationary-janus-clusters.json'), 'utf8'));
    doc.species[0].diffusivity = '3 mM';
    writeFileSync(bad, JSON.stringify(doc));
    const r = await run(['analyze', bad]);
    expect(r.code).toBe(2);
    expect(r.out).toBe('');
    expect(r.err).toContain('species[0].diffusivity: expected length^2/time, got "3 mM"');
    expect(r.err).not.toMatch(/\n\s+at /);

    writeFileSync(bad, '{ not json');
    const j = await run(['analyze', bad]);
    expect(j.code).toBe(2);
    expect(j.err).toMatch(/is not valid JSON/);

    const missing = await run(['analyze', join(dir, 'nope.json')]);
    expect(missing.code).toBe(2);
    expect(missing.err).toMatch(/cannot read .*nope\.json: ENOENT/);

    expect((await run(['analyze'])).code).toBe(2);
    expect((await run(['analyze', bad, '--format', 'xml'])).err).toMatch(/--format: expected json or text/);
    expect((await run(['frobnicate'])).code).toBe(2);
    expect((await run(['analyze', bad, '--colour'])).code).toBe(2);
  });

  it('runs as a real process through bin/brink.js', () => {
    const p = spawnSync(process.execPath, [join(root, 'bin/brink.js'), 'analyze', join(examples, 'stable-janus-dispersed.json')], { encoding: 'utf8' });
    expect(p.status).toBe(0);
    expect(JSON.parse(p.stdout).state).toBe('stable');
    const q = spawnSync(process.execPath, [join(root, 'bin/brink.js'), 'analyze', join(root, 'package.json')], { encoding: 'utf8' });
    expect(q.status).toBe(2);
    expect(q.stderr).toMatch(/^invalid mixture:/);
    expect(q.stderr).not.toMatch(/\n\s+at /);
  }, 60_000);
});
