/**
 * POST /api/plans/:id/candidates/:species/spectrum — the dispersion relation of a stored plan's
 * base with one candidate (server/engine/dispersion.ts), checked against outside references
 * (docs/references.md, "Stability of the mixture"):
 *
 *  - one species and one chemical: J(k) is 1×1 and its eigenvalue is the closed form
 *    λ(k) = −k²D − k² α μ ρ / (D_c k² + κ) (docs/model.md §3, the Keller–Segel growth rate);
 *  - the plan's two-species mixture: the growth rate at each allowed mode equals the largest
 *    real part of the eigenvalues of J(k) written out by hand in SI from docs/model.md §3 and
 *    handed to ml-matrix's EigenvalueDecomposition directly (the engine's own two-species path
 *    is the closed-form 2×2, so the library is an independent reference here);
 *  - the allowed modes are k = nπ/L (sealed) and 2πn/L (periodic), docs/model.md §4.
 */
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { dispersion } from '../../server/engine/dispersion.js';
import { withDose } from '../../server/engine/planner.js';
import type { Mixture, Species } from '../../server/engine/types.js';
import { freshApp } from '../helpers/app.js';
import { planRequest, postPlan } from '../helpers/plans.js';

let app: App;
let plan: { id: number; inputs: { base: Mixture; candidates: Species[] }; result: { candidates: { species: string; threshold: { density: number } | null; atMargin: { growthRate: number; fastestMode: { wavenumber: number; index: number } } | null; band: { quantiles?: { p: number; dose: number | null }[] } | null }[] } };

beforeAll(async () => {
  app = await freshApp({ demo: true });
  const r = await postPlan(app, planRequest);
  expect(r.statusCode).toBe(201);
  plan = r.json();
}, 60_000);
afterAll(async () => app?.close());

/** The SI Jacobian of docs/model.md §3 for constant activities, no crowding, by hand: J = −k²[diag(D) + diag(ρ) μ G αᵀ], G = (k² diag(D_c) + diag(κ))⁻¹ (chemicals without loss coupling). */
function handJacobian(mix: Mixture, k: number): number[][] {
  const chems = mix.chemicals;
  const M = mix.species.length;
  const mu = (m: number, s: number) => mix.species[m]!.couplings.find((c) => c.chemical === chems[s]!.id)?.mobility ?? 0;
  const alpha = (m: number, s: number) => {
    const c = mix.species[m]!.couplings.find((x) => x.chemical === chems[s]!.id);
    if (!c || !c.activity) return 0;
    const a = c.activity;
    if (a.kind !== 'constant') throw new Error('this hand Jacobian takes constant activities only');
    return a.rate;
  };
  const J: number[][] = [];
  for (let m = 0; m < M; m++) {
    J.push([]);
    for (let n = 0; n < M; n++) {
      let acc = m === n ? mix.species[m]!.diffusivity : 0;
      chems.forEach((ch, s) => {
        acc += (mix.species[m]!.density * mu(m, s) * alpha(n, s)) / (ch.diffusivity * k * k + (ch.lossRate ?? 0));
      });
      J[m]!.push(-k * k * acc);
    }
  }
  return J;
}

const maxRe = (J: number[][]) => Math.max(...new EigenvalueDecomposition(new Matrix(J)).realEigenvalues);

describe('the dispersion relation (engine)', () => {
  it('one species, one chemical: the growth rate is −k²D − k²αμρ/(D_c k² + κ) at every point and mode (docs/model.md §3)', () => {
    const D = 2.2e-13;
    const Dc = 1.4e-9;
    const kappa = 0.01;
    const alpha = -2e-16;
    const mu = 5e-11; // α μ < 0: self-attracting, so long waves grow
    const rho = 2e15;
    for (const walls of ['sealed', 'periodic', 'unbounded'] as const) {
      const mix: Mixture = {
        chemicals: [{ id: 'fuel', diffusivity: Dc, lossRate: kappa, concentration: 10 }],
        species: [{ id: 'bead', diffusivity: D, radius: 1e-6, density: rho, couplings: [{ chemical: 'fuel', activity: { kind: 'constant', rate: alpha }, mobility: mu }] }],
        chamber: { walls, length: walls === 'unbounded' ? null : 2e-3, depth: null },
        crowding: false,
        conditions: { temperature: 298.15, solventDensity: 997, duration: null, fieldOfView: null },
      } as Mixture;
      const lambda = (k: number) => -k * k * D - (k * k * alpha * mu * rho) / (Dc * k * k + kappa);
      const out = dispersion(mix);
      expect(out.curve.length).toBe(160);
      for (const p of out.curve) expect(Math.abs(p.growthRate - lambda(p.wavenumber))).toBeLessThanOrEqual(1e-9 * Math.max(Math.abs(lambda(p.wavenumber)), p.wavenumber ** 2 * D));
      if (walls === 'unbounded') expect(out.modes).toEqual([]);
      else {
        const k1 = (walls === 'sealed' ? Math.PI : 2 * Math.PI) / 2e-3;
        expect(out.modes.length).toBeGreaterThanOrEqual(3);
        out.modes.forEach((m, i) => {
          expect(m.index).toBe(i + 1);
          expect(m.wavenumber).toBeCloseTo(m.index * k1, 6);
          expect(Math.abs(m.growthRate - lambda(m.wavenumber))).toBeLessThanOrEqual(1e-9 * Math.abs(lambda(m.wavenumber)));
        });
        // the fastest allowed mode is the largest of the closed form over the modes
        const best = out.modes.reduce((a, b) => (b.growthRate > a.growthRate ? b : a));
        expect(out.fastest.index).toBe(best.index);
      }
      // the peak of the closed form: d/dk² of λ = 0 at k² = (√(−αμρκ/D) − κ)/D_c when positive
      const k2 = (Math.sqrt((-alpha * mu * rho * kappa) / D) - kappa) / Dc;
      if (walls === 'unbounded') expect(out.fastest.wavenumber).toBeCloseTo(Math.sqrt(k2), -Math.floor(Math.log10(Math.sqrt(k2))) + 4);
    }
  });
});

describe('POST /api/plans/:id/candidates/:species/spectrum', () => {
  it('at the margin dose: the plan’s own growth rate and fastest mode, and each allowed mode’s growth equals ml-matrix on the hand J(k = nπ/L)', async () => {
    const c = plan.result.candidates.find((x) => x.species === 'ptj-1um-b07')!;
    const r = await app.inject({ method: 'POST', url: `/api/plans/${plan.id}/candidates/ptj-1um-b07/spectrum`, payload: {} });
    expect(r.statusCode).toBe(200);
    const s = r.json();
    expect(s.doseIs).toBe('margin');
    expect(s.dose).toBeCloseTo(c.threshold!.density * 1.25, -8);
    expect(s.walls).toBe('sealed');
    expect(s.fastest.growthRate).toBeCloseTo(c.atMargin!.growthRate, 12);
    expect(s.fastest.index).toBe(c.atMargin!.fastestMode.index);
    const mix = withDose(plan.inputs.base, plan.inputs.candidates.find((d) => d.id === 'ptj-1um-b07')!, s.dose, 'add');
    // o2 moves nobody (μ = 0): drop it, as the model does (an exact reduction, docs/model.md §3)
    const hand = { ...mix, chemicals: mix.chemicals.filter((ch) => ch.id === 'h2o2') };
    expect(s.modes.length).toBeGreaterThanOrEqual(5);
    for (const m of s.modes.slice(0, 8)) {
      expect(m.wavenumber).toBeCloseTo((m.index * Math.PI) / 2e-3, 6);
      const ref = maxRe(handJacobian(hand, m.wavenumber));
      expect(Math.abs(m.growthRate - ref)).toBeLessThanOrEqual(1e-8 * Math.abs(ref) + 1e-18);
    }
    // the curve between them too, at a few points
    for (const p of s.curve.filter((_: unknown, i: number) => i % 40 === 0)) {
      const ref = maxRe(handJacobian(hand, p.wavenumber));
      expect(Math.abs(p.growthRate - ref)).toBeLessThanOrEqual(1e-8 * Math.abs(ref) + 1e-18);
    }
    // above the threshold the first mode grows; the margin dose is stationary
    expect(s.state).toBe('stationary');
    expect(s.modes[0].growthRate).toBeGreaterThan(0);
  });

  it('at a given dose below the threshold nothing grows; above the cap, or an unknown candidate, is refused in words', async () => {
    const c = plan.result.candidates.find((x) => x.species === 'ptj-1um-b07')!;
    const low = await app.inject({ method: 'POST', url: `/api/plans/${plan.id}/candidates/ptj-1um-b07/spectrum`, payload: { dose: `${(c.threshold!.density * 0.5 * 1e-6).toPrecision(6)} 1/mL`, points: 40 } });
    expect(low.statusCode).toBe(200);
    expect(low.json().doseIs).toBe('given');
    expect(low.json().curve.length).toBe(40);
    expect(low.json().state).toBe('stable');
    for (const m of low.json().modes) expect(m.growthRate).toBeLessThan(0);
    const high = await app.inject({ method: 'POST', url: `/api/plans/${plan.id}/candidates/ptj-1um-b07/spectrum`, payload: { dose: '1e15 1/mL' } });
    expect(high.statusCode).toBeGreaterThanOrEqual(400);
    expect(high.statusCode).toBeLessThan(500);
    expect(high.json().message).toMatch(/above the candidate's dose cap/);
    const none = await app.inject({ method: 'POST', url: `/api/plans/${plan.id}/candidates/no-such-bead/spectrum`, payload: {} });
    expect(none.statusCode).toBe(404);
    const infeasible = await app.inject({ method: 'POST', url: `/api/plans/${plan.id}/candidates/catb-0.22-l04/spectrum`, payload: {} });
    expect(infeasible.statusCode).toBeGreaterThanOrEqual(400);
    expect(infeasible.json().message).toMatch(/no margin dose.*give a dose/);
    const bad = await app.inject({ method: 'POST', url: `/api/plans/${plan.id}/candidates/ptj-1um-b07/spectrum`, payload: { dose: '3 mM' } });
    expect(bad.statusCode).toBe(400);
  });

  it("the band carries its empirical distribution: 21 non-decreasing quantiles whose 5 %, 50 % and 95 % are the band's own", () => {
    const c = plan.result.candidates.find((x) => x.species === 'ptj-1um-b07')! as unknown as { band: { p05: number; median: number; p95: number; quantiles: { p: number; dose: number | null }[] } };
    const q = c.band.quantiles;
    expect(q.length).toBe(21);
    expect(q[0]!.p).toBe(0);
    expect(q[20]!.p).toBe(1);
    for (let i = 1; i < q.length; i++) expect(q[i]!.dose ?? Infinity).toBeGreaterThanOrEqual(q[i - 1]!.dose ?? Infinity);
    expect(q[1]!.dose).toBe(c.band.p05);
    expect(q[10]!.dose).toBe(c.band.median);
    expect(q[19]!.dose).toBe(c.band.p95);
  });
});
