/**
 * Michaelis–Menten least squares on the Puromycin "treated" data.
 *
 * Source: M. A. Treloar (1974), analysed in D. M. Bates and D. G. Watts,
 * *Nonlinear Regression Analysis and Its Applications* (1988); the same data
 * ship as R's `datasets::Puromycin` (docs/references.md, "data and fit confirmed"):
 * V_max = 212.68 ± 6.947, K = 0.06412 ± 0.00828 ppm, residual sum of squares
 * 1195.45, residual standard error 10.93 on 10 degrees of freedom.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { parseFitOptions, runFit } from '../../server/calibrate/run.js';
import { main } from '../../server/cli.js';
import { fitKinetics } from '../../server/engine/fit/models.js';

const conc = [0.02, 0.02, 0.06, 0.06, 0.11, 0.11, 0.22, 0.22, 0.56, 0.56, 1.1, 1.1];
const rate = [76, 47, 97, 107, 123, 139, 159, 152, 191, 201, 207, 200];
const sig4 = (x: number) => Number(x.toPrecision(4));
const file = new URL('../calibrate/puromycin-treated.csv', import.meta.url).pathname;

describe('Puromycin (Bates & Watts 1988)', () => {
  it('the engine fit gives the published estimates, standard errors and residual standard error to four figures', () => {
    const f = fitKinetics(conc, rate);
    expect(f.converged).toBe(true);
    expect(f.stop).toBe('converged');
    expect(f.weighting).toBe('unweighted');
    expect(sig4(f.parameters.maxRate!.value)).toBe(212.7);
    expect(sig4(f.parameters.maxRate!.sd!)).toBe(6.947);
    expect(sig4(f.parameters.michaelis!.value)).toBe(0.06412);
    expect(Number(f.parameters.michaelis!.sd!.toPrecision(3))).toBe(0.00828); // published to three figures
    expect(sig4(f.residualStandardError)).toBe(10.93);
    expect(f.dof).toBe(10);
    expect(sig4(f.rss)).toBe(1195);
    expect(f.rss).toBeCloseTo(1195.45, 1);
  });

  it('from the CSV file and through `brink fit kinetics`', async () => {
    const f = runFit('kinetics', readFileSync(file, 'utf8'), parseFitOptions('kinetics', {}));
    expect(sig4(f.parameters.maxRate!.value)).toBe(212.7);
    let out = '';
    const code = await main(['fit', 'kinetics', file], { out: (t) => (out += t), err: () => {} });
    expect(code).toBe(0);
    const r = JSON.parse(out);
    expect(sig4(r.parameters.maxRate.value)).toBe(212.7);
    expect(sig4(r.parameters.maxRate.sd)).toBe(6.947);
    expect(sig4(r.parameters.michaelis.value)).toBe(0.06412);
    expect(Number(r.parameters.michaelis.sd.toPrecision(3))).toBe(0.00828);
    expect(sig4(r.residualStandardError)).toBe(10.93);
    expect(r.dof).toBe(10);
    expect(r.points).toBe(12);
  });

  it('does not depend on the starting point', () => {
    // the same minimum from rescaled data (rates ×1000, concentrations ×0.001)
    const f = fitKinetics(conc.map((c) => c * 1e-3), rate.map((r) => r * 1e3));
    expect(sig4(f.parameters.maxRate!.value / 1e3)).toBe(212.7);
    expect(sig4(f.parameters.michaelis!.value * 1e3)).toBe(0.06412);
  });
});
