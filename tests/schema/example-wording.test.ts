/**
 * The example descriptions say what the signs mean (docs/model.md §1): v = −μ∇c,
 * so μ > 0 drifts down the gradient, into the depletion a consumer (α < 0) makes,
 * which is self-attraction (α μ < 0); μ < 0 climbs the gradient, away from it
 * (α μ > 0 for a consumer: self-repulsion).
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { parseMixture } from '../../server/schema/mixture.js';

const read = (f: string) => JSON.parse(readFileSync(new URL(`../../seeds/examples/${f}.json`, import.meta.url), 'utf8')) as { description: string };

describe('example descriptions against their signs', () => {
  it('travelling bands: the swimmers (α < 0, μ > 0) move into their depletion; the beads (α < 0, μ < 0) away from it', () => {
    const doc = read('oscillatory-travelling-bands');
    const m = parseMixture(doc);
    const [swim, bead] = m.species.map((s) => s.couplings[0]!);
    expect(swim!.activity).toMatchObject({ kind: 'constant' });
    expect((swim!.activity as { rate: number }).rate).toBeLessThan(0);
    expect(swim!.mobility).toBeGreaterThan(0);
    expect((bead!.activity as { rate: number }).rate).toBeLessThan(0);
    expect(bead!.mobility).toBeLessThan(0);
    expect(doc.description).toMatch(/swimmers .* drift down its gradient, into the depletion .* \(self-attracting\)/);
    expect(doc.description).toMatch(/beads .* drawn up the gradient, away from the depletion \(self-repelling\)/);
    expect(doc.description).not.toMatch(/flee/);
  });

  it('enzyme beads: the Pt colloids (α < 0, μ > 0) drift down the peroxide gradient; the beads (μ < 0) climb it', () => {
    const doc = read('saturating-enzyme-beads');
    const m = parseMixture(doc);
    const pt = m.species.find((s) => s.id === 'ptj-1um')!.couplings.find((c) => c.chemical === 'h2o2')!;
    const gox = m.species.find((s) => s.id === 'gox-bead')!.couplings.find((c) => c.chemical === 'h2o2')!;
    expect((pt.activity as { rate: number }).rate).toBeLessThan(0);
    expect(pt.mobility).toBeGreaterThan(0);
    expect(gox.mobility).toBeLessThan(0);
    expect(doc.description).toMatch(/colloids .* consume the peroxide and drift down its gradient/);
    expect(doc.description).toMatch(/enzyme beads climb the peroxide gradient/);
    expect(doc.description).not.toMatch(/flee/);
  });

  it('the B07 and B09 colloids: down the gradient towards neighbours (μ > 0), up it away from the depleted zones (μ < 0)', () => {
    const b07 = read('stationary-janus-clusters');
    const b09 = read('stable-janus-dispersed');
    expect(parseMixture(b07).species[0]!.couplings[0]!.mobility).toBeGreaterThan(0);
    expect(b07.description).toMatch(/drifts down the peroxide gradient, towards its neighbours/);
    expect(parseMixture(b09).species[0]!.couplings[0]!.mobility).toBeLessThan(0);
    expect(b09.description).toMatch(/climb the peroxide gradient, away from the depleted zones/);
  });
});
