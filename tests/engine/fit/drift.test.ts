/**
 * Mobility from drift against gradient: v = −μ ∂c/∂x (docs/model.md §1). Exact data
 * give μ exactly; noisy data (seeded, known noise) give μ within the standard
 * error the fit reports; the ordinary least-squares slope through the origin is
 * Σ x y / Σ x² (any regression text).
 */
import { describe, expect, it } from 'vitest';
import { fitDrift } from '../../../server/engine/fit/models.js';
import { Random } from '../../../server/engine/random.js';

describe('drift fit', () => {
  const g = [-2e4, -1e4, 0.5e4, 1e4, 2e4, 3e4]; // mol/m⁴ (= mM/mm ×10⁻³ … magnitudes)
  it('exact data: μ exactly, zero standard error; the sign follows the convention', () => {
    const mu = 3e-11;
    const f = fitDrift(g, g.map((x) => -mu * x));
    expect(f.parameters.mobility!.value).toBeCloseTo(mu, 24);
    expect(f.parameters.mobility!.sd).toBeLessThan(1e-24);
    expect(f.notes[0]).toMatch(/μ > 0 means the particles move down the gradient/);
    // particles moving up the gradient (v along +∇c) have μ < 0
    expect(fitDrift(g, g.map((x) => 2e-11 * x)).parameters.mobility!.value).toBeLessThan(0);
  });
  it('noisy data: within four reported standard errors, and Σxy/Σx² by hand', () => {
    const rng = new Random(9);
    let inside = 0;
    for (let t = 0; t < 50; t++) {
      const mu = 3e-11;
      const v = g.map((x) => -mu * x + 1e-7 * rng.normal());
      const f = fitDrift(g, v);
      const byHand = -g.reduce((a, x, i) => a + x * v[i]!, 0) / g.reduce((a, x) => a + x * x, 0);
      expect(f.parameters.mobility!.value).toBeCloseTo(byHand, 24);
      if (Math.abs(f.parameters.mobility!.value - mu) < 2 * f.parameters.mobility!.sd!) inside++;
      expect(Math.abs(f.parameters.mobility!.value - mu)).toBeLessThan(6 * f.parameters.mobility!.sd!);
    }
    // about 95 % should fall within 2 standard errors (t with 5 dof: ~90 %)
    expect(inside).toBeGreaterThan(38);
  });
  it('refuses data without a gradient', () => {
    expect(() => fitDrift([0, 0], [1, 2])).toThrow(/every gradient is zero/);
  });
});
