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
    // every candidate: the dose path over (0, cap], first onset, warnings, and the whole band
    for (const x of c) {
      expect(x.dosePath[0].from).toBe(0);
      expect(x.dosePath[x.dosePath.length - 1].to).toBe(x.cap.density);
      expect('firstOnset' in x).toBe(true);
      expect(Array.isArray(x.warnings)).toBe(true);
      expect(x.band).toMatchObject({ samples: 100, seed: 20261201 });
      expect(typeof x.band.alreadyPast).toBe('number');
    }
    for (const x of c.slice(0, 2)) {
      expect(x.threshold.alreadyPast).toBe(0);
      expect(x.threshold.feasibleFraction).toBe(1);
      expect(x.threshold.aboveCap).toEqual({ median: false, p05: false, p95: false });
    }
    // The swimmer turns the washed base oscillatory before it clusters. Routh–Hurwitz on the 2×2 Jacobian at
    // k₁ = π/L (docs/model.md §5), by hand from the file's values: s₁ = α₁μ₁ρ₁ with ρ₁ = φ/((4/3)π a³),
    // trace = 0 at x_T = (s₁ + D_c k₁² (D₁ + D₂)) / |α₂ μ₂|, while det > 0 there.
    const rho1 = 1e-3 / ((4 / 3) * Math.PI * 1e-18);
    const s1 = -2e-16 * -30e-12 * rho1;
    const gamma = 1.4e-9 * (Math.PI / 2e-3) ** 2;
    const xT = (s1 + gamma * (0.22e-12 + 20e-12)) / (3e-16 * 200e-12);
    const swim = c[0];
    expect(swim.firstOnset.state).toBe('oscillatory');
    expect(Math.abs(swim.firstOnset.density / xT - 1)).toBeLessThan(1e-5);
    expect(swim.dosePath.map((iv: { state: string }) => iv.state)).toEqual(['stable', 'oscillatory', 'stationary']);
    expect(swim.threshold.density).toBeGreaterThan(xT);
    expect(swim.warnings.map((w: { code: string }) => w.code)).toContain('earlier-instability');
    // the Janus batch clusters first: no earlier onset, no warning
    expect(c[1].firstOnset).toEqual({ density: c[1].threshold.density, state: 'stationary' });
    expect(c[1].warnings).toEqual([]);
    expect(c[2]).toMatchObject({ feasible: false, reason: 'wrong-sign', threshold: null, atMargin: null });
    expect(c[3]).toMatchObject({ feasible: false, reason: 'no-coupling' });
    // same seed, same numbers
    expect(JSON.parse((await run(['screen', file])).out)).toEqual(out);
  }, 60_000);

  it('the text format shows the dose path and the warnings', async () => {
    const r = await run(['screen', file, '--format', 'text']);
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/ptj-swim-0\.5-s02: .*\n\s+dose path \(particles\/mL\): stable \(0, [^\]]+\], oscillatory .*first onset oscillatory at/);
    expect(r.out).toMatch(/warning earlier-instability: the mixture already turns oscillatory/);
    expect(r.out).toMatch(/already past in 0\.0 % of 100 draws/);
    // the engine's doses ("2.50e+7 per mL" in the JSON) in the text as the pages write them (display.ts benchText)
    const json = JSON.parse((await run(['screen', file])).out);
    const earlier = json.candidates.flatMap((c: { warnings: { code: string; message: string }[] }) => c.warnings).find((w: { code: string }) => w.code === 'earlier-instability');
    expect(earlier.message).toMatch(/\d per mL/);
    expect(r.out).not.toMatch(/ per mL|mol\/m\^3/);
    expect(r.out).toMatch(/warning earlier-instability: the mixture already turns oscillatory from [\d.]+ × 10[⁰¹²³⁴⁵⁶⁷⁸⁹]+ particles\/mL/);
  }, 60_000);

  it('finds the narrow oscillatory window of seeds/screens/narrow-window.json between two scan doses', async () => {
    const r = await run(['screen', new URL('../../seeds/screens/narrow-window.json', import.meta.url).pathname]);
    expect(r.code).toBe(0);
    const [c] = JSON.parse(r.out).candidates;
    // Routh–Hurwitz at k₁ = π/L by hand (docs/model.md §5): trace J = 0 at x_T = (s₁ + D_c k₁² (D₁ + D₂)) / |α₂ μ₂|,
    // s₁ = α₁ μ₁ ρ₁ = (−5e-15)(−1e-10)(3.2e11); the window's far end is where trace² = 4 det (tests/references/planner-reference.test.ts)
    const xT = (-5e-15 * -1e-10 * 3.2e11 + 1.4e-9 * (Math.PI / 4e-4) ** 2 * (1e-12 + 2.9e-12)) / (6e-18 * 1e-10);
    expect(c.feasible).toBe(true);
    expect(Math.abs(c.threshold.density / xT - 1)).toBeLessThan(1e-5);
    expect(c.window.upTo / c.threshold.density).toBeLessThan(1.554); // narrower than one scan step
    expect(c.dosePath.map((iv: { state: string }) => iv.state)).toEqual(['stable', 'oscillatory', 'stationary']);
    // Above the far end trace² > 4 det with trace > 0 (Routh–Hurwitz): two real roots, the larger positive, so the
    // mixture turns stationary (still unstable), not stable; ml-matrix agrees in tests/references/planner-reference.test.ts
    expect(c.window.stateAbove).toBe('stationary');
    const text = (await run(['screen', new URL('../../seeds/screens/narrow-window.json', import.meta.url).pathname, '--format', 'text'])).out;
    expect(text).toMatch(/swimmer: 8\.28 × 10⁸ particles\/mL \([^)]+ by volume\), oscillatory up to 1\.08 × 10⁹ particles\/mL, stationary above;/);
    expect(text).not.toMatch(/comes back/);
  }, 60_000);

  it('text: every dose-path interval reads with two different ends, even a stretch just below the cap', async () => {
    // One self-attracting Janus species past its boundary, diluted by an inert tracer in replace mode: by Keller–Segel
    // it is stable once f ρ |α μ|/D < D_c k₁², f* = D_c k₁² D/(ρ|αμ|) ≈ 2.7e-4, i.e. only in the last 0.03 % before the cap.
    const doc = JSON.parse(readFileSync(file, 'utf8'));
    doc.base.species[0].couplings[0].mobility = '50 um^2/(s*mM)';
    doc.candidates = doc.candidates.filter((c: { id: string }) => c.id === 'silica-1um-t01');
    doc.boundary = 'restore';
    doc.dosing = 'replace';
    delete doc.uncertainty;
    const p = join(mkdtempSync(join(tmpdir(), 'brink-screen-')), 'r.json');
    writeFileSync(p, JSON.stringify(doc));
    const r = await run(['screen', p, '--format', 'text']);
    expect(r.code).toBe(0);
    const path = /dose path \(particles\/mL\): (.*)/.exec(r.out)![1]!;
    const ends = [...path.matchAll(/\((\S+), (\S+)\]/g)].map((m) => [m[1], m[2]]);
    expect(ends.length).toBe(2);
    for (const [a, b] of ends) expect(a).not.toBe(b);
    expect(path).toMatch(/^stationary \(0, \S+\], stable \(/);
  }, 60_000);

  it('says what the input lacks: top-level warnings in JSON and text, and the sample at the margin dose', async () => {
    // The example with its fuel level, every material density and the chamber depth removed. The missing-data rules
    // (docs/model.md §8): a chemical without a level is taken as 0; a consumed fuel at 0 is absent; settling needs a
    // material density, and its comparison a chamber depth. Without uncertainty, so the test is quick.
    const doc = JSON.parse(readFileSync(file, 'utf8'));
    delete doc.base.chemicals[0].concentration;
    delete doc.base.chamber.depth;
    for (const sp of [...doc.base.species, ...doc.candidates]) delete sp.materialDensity;
    delete doc.uncertainty;
    const p = join(mkdtempSync(join(tmpdir(), 'brink-screen-')), 'r.json');
    writeFileSync(p, JSON.stringify(doc));
    const r = await run(['screen', p]);
    expect(r.code).toBe(0);
    const out = JSON.parse(r.out);
    const codes = out.warnings.map((w: { code: string }) => w.code);
    expect(codes).toEqual(['no-concentration', 'fuel-runs-out', 'sedimentation-not-checked']);
    expect(out.warnings[0]).toMatchObject({ chemical: 'h2o2' });
    expect(out.warnings[0].message).toMatch(/no concentration given for "h2o2": taken as 0/);
    // the base's Janus batch consumes h2o2 (activity −2e-16 mol/s < 0): an absent fuel, lifetime 0
    expect(out.warnings[1]).toMatchObject({ chemical: 'h2o2', lifetime: 0 });
    expect(out.warnings[1].message).toMatch(/ptj-1um-b09 consumes it/);
    expect(out.warnings[2]).toMatchObject({ species: ['ptj-1um-b09'], missing: 'materialDensity' });
    // said once for the screen, whether or not a candidate is feasible (two here are not)
    expect(out.candidates.filter((c: { feasible: boolean }) => !c.feasible).length).toBe(2);
    const text = (await run(['screen', p, '--format', 'text'])).out;
    const head = text.split(/\n\s*1\. /)[0]!;
    expect(head).toMatch(/\nwarning no-concentration: no concentration given for "h2o2": taken as 0\./);
    expect(head).toMatch(/\nwarning fuel-runs-out: h2o2 is absent/);
    expect(head).toMatch(/\nwarning sedimentation-not-checked: settling of ptj-1um-b09 was not checked/);
    // the doped sample at the margin dose names the candidate too; the missing level is not said again
    expect(text).toMatch(/ptj-1um-b07: [^\n]*\n(?:\s+[^\n]*\n)*?\s+at 1\.25× the threshold, warning sedimentation-not-checked: settling of ptj-1um-b09, ptj-1um-b07 was not checked/);
    expect(text.match(/no-concentration/g)!.length).toBe(1);

    // depth alone missing, densities given: settling is computed but cannot be compared with a depth
    const doc2 = JSON.parse(readFileSync(file, 'utf8'));
    delete doc2.base.chamber.depth;
    delete doc2.uncertainty;
    writeFileSync(p, JSON.stringify(doc2));
    const codes2 = JSON.parse((await run(['screen', p])).out).warnings.map((w: { code: string }) => w.code);
    expect(codes2).toContain('no-chamber-depth');
    expect(codes2).not.toContain('no-concentration');
  }, 60_000);

  it('a complete screen file raises none of the missing-data warnings', async () => {
    const out = JSON.parse((await run(['screen', file])).out);
    expect(Array.isArray(out.warnings)).toBe(true);
    const missing = ['no-concentration', 'fuel-runs-out', 'sedimentation-not-checked', 'no-chamber-depth'];
    for (const w of out.warnings) expect(missing).not.toContain(w.code);
    // its base is complete, so settling is checked: 1 µm, 2 g/mL in water at 25 °C settles (Stokes drag, docs/references.md)
    expect(out.warnings.map((w: { code: string }) => w.code)).toEqual(['sedimentation']);
    const text = (await run(['screen', file, '--format', 'text'])).out;
    for (const code of ['no-concentration', 'sedimentation-not-checked', 'no-chamber-depth']) expect(text).not.toMatch(new RegExp(`warning ${code}:`));
    // at 1.25× the threshold a fuel can run short (a genuine finding, printed under the candidate), never at the top
    expect(text.split(/\n\s*1\. /)[0]).not.toMatch(/fuel-runs-out/);
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
