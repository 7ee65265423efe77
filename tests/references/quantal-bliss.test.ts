/**
 * The quantal dose–response fit against the published worked example: C. I. Bliss (1935), beetle mortality after
 * five hours' exposure to gaseous carbon disulphide, as analysed in A. J. Dobson and A. G. Barnett, *An
 * Introduction to Generalized Linear Models* (3rd ed., Chapman & Hall/CRC 2008), §7.3, Tables 7.2–7.3
 * (docs/references.md).
 *
 * Data: log10 dose (CS₂ mg/L) 1.6907 … 1.8839, beetles 59 … 60, killed 6 … 60.
 * Maximum-likelihood estimates, from memory (the table recalled, not re-read), each confirmed independently
 * before it was kept here: by maximising the binomial log-likelihood with a general-purpose optimiser (SciPy's
 * Nelder–Mead then BFGS, outside the repository; and here, in the first test, ml-levenberg-marquardt on the
 * deviance) and taking the standard errors from the expected information Σ n (dπ/dη)²/(π(1−π)) x xᵀ — the
 * figures below agree with both computations to the digits given:
 *   logit    β₁ = −60.72 (SE 5.18), β₂ = 34.27 (SE 2.91), deviance 11.23
 *   probit   β₁ = −34.94 (SE 2.65), β₂ = 19.73 (SE 1.49), deviance 10.12
 *   cloglog  β₁ = −39.57 (SE 3.24), β₂ = 22.04 (SE 1.80), deviance 3.45
 * (Observed rather than expected information would give the probit and cloglog SEs as 2.64/1.48 and 3.23/1.79:
 * the published figures are Fisher scoring's, as is brink's fit.)
 */
import { readFileSync } from 'node:fs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { parseQuantalOptions, runQuantalFit } from '../../server/calibrate/quantal.js';
import { main } from '../../server/cli.js';
import { fitQuantal, type QuantalLink } from '../../server/engine/fit/quantal.js';
import type { App } from '../../server/http/app.js';
import { freshApp } from '../helpers/app.js';
import { expectedInformationSe, lmReference } from '../helpers/quantal-reference.js';

const log10Dose = [1.6907, 1.7242, 1.7552, 1.7842, 1.8113, 1.8369, 1.861, 1.8839];
const beetles = [59, 60, 62, 56, 63, 59, 62, 60];
const killed = [6, 13, 18, 28, 52, 53, 61, 60];
const file = new URL('../calibrate/beetles-log10.csv', import.meta.url).pathname;

// Dobson & Barnett (2008) Table 7.3, from memory, confirmed by an independent optimiser (header)
const PUBLISHED: Record<QuantalLink, { b1: string; se1: string; b2: string; se2: string; deviance: string }> = {
  logit: { b1: '-60.72', se1: '5.18', b2: '34.27', se2: '2.91', deviance: '11.23' },
  probit: { b1: '-34.94', se1: '2.65', b2: '19.73', se2: '1.49', deviance: '10.12' },
  cloglog: { b1: '-39.57', se1: '3.24', b2: '22.04', se2: '1.80', deviance: '3.45' },
};
/** the number written with as many decimals as the published figure */
const as = (x: number, published: string) => x.toFixed(published.split('.')[1]?.length ?? 0);

describe('Bliss (1935) beetle mortality, Dobson & Barnett (2008) §7.3', () => {
  it('the recalled figures are those of an independent fit (ml-levenberg-marquardt on the deviance, expected information by hand)', () => {
    for (const link of ['logit', 'probit', 'cloglog'] as const) {
      const r = lmReference(link, log10Dose, beetles, killed, [0, 1]);
      const [se1, se2] = expectedInformationSe(link, log10Dose, beetles, r.intercept, r.slope);
      const p = PUBLISHED[link];
      expect([as(r.intercept, p.b1), as(se1, p.se1), as(r.slope, p.b2), as(se2, p.se2), as(r.deviance, p.deviance)], link).toEqual([p.b1, p.se1, p.b2, p.se2, p.deviance]);
    }
  });

  for (const link of ['logit', 'probit', 'cloglog'] as const) {
    it(`${link}: coefficients, standard errors and deviance as published (log10 dose given, linear scale)`, () => {
      const f = fitQuantal(log10Dose, beetles, killed, { link, scale: 'linear' });
      const p = PUBLISHED[link];
      expect(f.converged).toBe(true);
      expect(as(f.parameters.intercept.value!, p.b1)).toBe(p.b1);
      expect(as(f.parameters.intercept.sd!, p.se1)).toBe(p.se1);
      expect(as(f.parameters.slope.value!, p.b2)).toBe(p.b2);
      expect(as(f.parameters.slope.sd!, p.se2)).toBe(p.se2);
      expect(as(f.deviance!, p.deviance)).toBe(p.deviance);
      expect(f.dof).toBe(6);
      expect(f.points).toBe(8);
      // the ED50 is where the fitted curve is at one half (β₁ + β₂ x₅₀ = g(½))
      const x50 = f.parameters.ed50.value!;
      expect(f.parameters.intercept.value! + f.parameters.slope.value! * x50).toBeCloseTo(link === 'cloglog' ? Math.log(Math.LN2) : 0, 10);
    });

    it(`${link}: the same fit from doses 10^x on the log10 scale`, () => {
      const lin = fitQuantal(log10Dose, beetles, killed, { link, scale: 'linear' });
      const log = fitQuantal(log10Dose.map((x) => 10 ** x), beetles, killed, { link, scale: 'log10' });
      for (const k of ['intercept', 'slope'] as const) {
        expect(log.parameters[k].value! / lin.parameters[k].value!).toBeCloseTo(1, 9);
        expect(log.parameters[k].sd! / lin.parameters[k].sd!).toBeCloseTo(1, 9);
      }
      expect(log.deviance! / lin.deviance!).toBeCloseTo(1, 9);
      // ED50 in mg/L is 10^(log10 ED50); the delta-method interval on log10 dose, back-transformed
      const e = log.parameters.ed50;
      expect(Math.log10(e.value!)).toBeCloseTo(lin.parameters.ed50.value!, 9);
      expect(e.log10!.sd).toBeCloseTo(lin.parameters.ed50.sd!, 9);
      expect(Math.log10(e.interval!.lower)).toBeCloseTo(lin.parameters.ed50.interval!.lower, 9);
      expect(Math.log10(e.interval!.upper)).toBeCloseTo(lin.parameters.ed50.interval!.upper, 9);
      expect(e.interval!.method).toBe('delta-log10');
    });
  }

  it('from the CSV file: runQuantalFit, `brink fit quantal --scale linear`, and a dose column in mg/L converted to SI', async () => {
    const text = readFileSync(file, 'utf8');
    const r = runQuantalFit(text, parseQuantalOptions({ scale: 'linear' }));
    expect(as(r.parameters.slope.value!, '34.27')).toBe('34.27');
    expect(r.input.rows).toBe(8);
    const out: string[] = [];
    const err: string[] = [];
    const code = await main(['fit', 'quantal', file, '--scale', 'linear', '--link', 'cloglog'], { out: (t) => out.push(t), err: (t) => err.push(t) });
    expect(err.join('')).toBe('');
    expect(code).toBe(0);
    const cli = JSON.parse(out.join(''));
    expect(as(cli.parameters.intercept.value, '-39.57')).toBe('-39.57');
    expect(as(cli.parameters.slope.sd, '1.80')).toBe('1.80');
    expect(as(cli.deviance, '3.45')).toBe('3.45');
    expect(cli.dof).toBe(6);
    expect(cli.points).toBe(8);
    expect(Object.keys(cli.parameters.ed50)).toEqual(expect.arrayContaining(['value', 'sd', 'unit']));
    // doses in mg/L: SI is kg/m³ (1 mg/L = 10⁻³ kg/m³), so on log10 dose β₁ shifts by 3 β₂ and the ED50 is the same dose
    const mgL = ['dose [mg/L],tubes,responded', ...log10Dose.map((x, i) => `${10 ** x},${beetles[i]},${killed[i]}`)].join('\n');
    const si = runQuantalFit(mgL, parseQuantalOptions({}));
    const lin = fitQuantal(log10Dose, beetles, killed, { scale: 'linear' });
    expect(si.parameters.ed50.unit).toBe('kg/m^3');
    expect(si.parameters.intercept.value!).toBeCloseTo(lin.parameters.intercept.value! + 3 * lin.parameters.slope.value!, 6);
    expect(si.parameters.ed50.value! / (10 ** lin.parameters.ed50.value! * 1e-3)).toBeCloseTo(1, 9);
    expect(si.ed50InFileUnit!.unit).toBe('mg/L');
    expect(si.ed50InFileUnit!.value! / 10 ** lin.parameters.ed50.value!).toBeCloseTo(1, 9);
  });
});

describe('over HTTP', () => {
  let app: App;
  beforeAll(async () => {
    app = await freshApp();
  });
  afterAll(async () => {
    await app.close();
  });
  it('POST /api/fits/quantal fits the same table in the worker pool; bad options and rows are 400 naming them', async () => {
    const data = readFileSync(file, 'utf8');
    const r = await app.inject({ method: 'POST', url: '/api/fits/quantal', payload: { data, options: { link: 'probit', scale: 'linear' } } });
    expect(r.statusCode).toBe(200);
    expect(as(r.json().parameters.intercept.value, '-34.94')).toBe('-34.94');
    const bad = await app.inject({ method: 'POST', url: '/api/fits/quantal', payload: { data, options: { link: 'weibull' } } });
    expect(bad.statusCode).toBe(400);
    expect(bad.json().problems[0].path).toBe('options.link');
    const over = await app.inject({ method: 'POST', url: '/api/fits/quantal', payload: { data: 'dose [1/mL],tubes,responded\n1e6,3,4\n2e6,3,1\n', options: {} } });
    expect(over.statusCode).toBe(400);
    expect(over.json().problems[0].path).toBe('line 2, column 3 (responded)');
  });
});
