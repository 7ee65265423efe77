/** brink analyze on a mixture file with missing data says so in the text and the JSON (docs/model.md §8, §9). */
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { main } from '../../server/cli.js';

const doc = {
  chemicals: [{ id: 'h2o2', diffusivity: '1.4e-9 m^2/s' }],
  species: [{ id: 'pt', diffusivity: '0.22 um^2/s', radius: '1 um', volumeFraction: '0.1 percent', couplings: [{ chemical: 'h2o2', activity: '-2e-16 mol/s', mobility: '50 um^2/(s*mM)' }] }],
  chamber: { walls: 'sealed', length: '2 mm' },
};

async function run(format: 'json' | 'text') {
  const file = join(mkdtempSync(join(tmpdir(), 'brink-missing-')), 'm.json');
  writeFileSync(file, JSON.stringify(doc));
  let out = '';
  const code = await main(['analyze', file, '--format', format], { out: (t) => (out += t), err: () => undefined });
  return { code, out };
}

describe('brink analyze with a fuel without concentration and a species without material density', () => {
  it('text: the fuel is absent, and the warnings name what is missing', async () => {
    const { code, out } = await run('text');
    expect(code).toBe(0);
    expect(out).toMatch(/fuel life: {4}h2o2 is absent \(concentration 0\): used up at once/);
    expect(out).toMatch(/- no-concentration: no concentration given for "h2o2": taken as 0\./);
    expect(out).toMatch(/- fuel-runs-out: h2o2 is absent/);
    expect(out).toMatch(/- sedimentation-not-checked: settling of pt was not checked: no materialDensity/);
  });

  it('json: warnings and checks.fuel carry it', async () => {
    const r = JSON.parse((await run('json')).out);
    expect(r.warnings.map((w: { code: string }) => w.code)).toEqual(expect.arrayContaining(['no-concentration', 'fuel-runs-out', 'sedimentation-not-checked']));
    expect(r.checks.fuel).toEqual([{ chemical: 'h2o2', consumptionRate: expect.any(Number), lifetime: 0, absent: true }]);
  });
});
