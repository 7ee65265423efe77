/** Raw data input: every CSV error with its line and column; JSON tables; unit conversion of columns. */
import { describe, expect, it } from 'vitest';
import { parseFitOptions, runFit } from '../../server/calibrate/run.js';
import { InputError } from '../../server/shelf/errors.js';

function problems(method: 'msd' | 'kinetics' | 'drift', data: unknown, options: unknown = {}): { path: string; message: string }[] {
  try {
    runFit(method, data, parseFitOptions(method, options));
  } catch (e) {
    if (e instanceof InputError) return e.problems;
    throw e;
  }
  throw new Error('expected a rejection');
}

const good = 'lag [s],msd [um^2]\n0.1,0.09\n0.2,0.17\n0.5,0.41\n1,0.83\n2,1.61\n';

describe('CSV input errors name the line and column', () => {
  it('non-numeric cell', () => {
    expect(problems('msd', 'lag [s],msd [um^2]\n0.1,0.09\n0.2,abc\n0.5,0.4\n')).toEqual([{ path: 'line 3, column 2 (msd [um^2])', message: 'not a number: "abc"' }]);
  });
  it('negative and non-increasing lags, negative MSD', () => {
    expect(problems('msd', 'lag [s],msd [um^2]\n-0.1,0.09\n0.2,0.17\n0.2,0.3\n0.5,-0.4\n')).toEqual([
      { path: 'line 2, column 1 (lag [s])', message: 'lag times must be positive, got -0.1' },
      { path: 'line 4, column 1 (lag [s])', message: 'lag times must increase from row to row' },
      { path: 'line 5, column 2 (msd [um^2])', message: 'a mean-squared displacement cannot be negative' },
    ]);
  });
  it('too few points for the model', () => {
    expect(problems('msd', 'lag [s],msd [um^2]\n0.1,0.09\n0.2,0.17\n', { model: 'active-2d' })).toEqual([{ path: 'data', message: 'the active-2d model needs at least 4 points, got 2' }]);
  });
  it('units of the wrong dimension, and a missing unit', () => {
    expect(problems('msd', 'lag [s],msd [um]\n0.1,0.09\n0.2,0.17\n')).toEqual([
      { path: 'line 1, column 2 (msd [um])', message: 'the mean-squared displacement needs a unit of length^2, got "um" (length)' },
    ]);
    expect(problems('msd', 'lag,msd [um^2]\n0.1,0.09\n0.2,0.17\n')[0]).toEqual({ path: 'line 1, column 1 (lag)', message: 'give the unit of the lag time in brackets, e.g. "lag [s]" (time)' });
    expect(problems('drift', 'gradient [mM],velocity [um/s]\n1,2\n2,4\n')[0]!.message).toMatch(/needs a unit of amount\/length\^4, got "mM" \(amount\/length\^3\)/);
  });
  it('a row with the wrong number of cells, an empty file, comments and blank lines', () => {
    expect(problems('msd', 'lag [s],msd [um^2]\n0.1,0.09\n0.2\n')).toEqual([{ path: 'line 3', message: 'expected 2 cells (as in the header), got 1' }]);
    expect(problems('msd', '')).toEqual([{ path: 'line 1', message: 'the file is empty: expected a header row such as "lag [s], msd [um^2]"' }]);
    const withComments = `# exported by the tracker\n${good}\n\n`;
    expect(runFit('msd', withComments, parseFitOptions('msd', {})).points).toBe(5);
  });
  it('bad options name the option', () => {
    expect(problems('msd', good, { model: 'wobbly' })[0]!.path).toBe('options.model');
    expect(problems('kinetics', 'c [mM],r [mM/s]\n1,1\n2,2\n3,3\n', { particleDensity: '1 mM' })[0]).toMatchObject({ path: 'options.particleDensity' });
  });
});

describe('columns in SI', () => {
  it('um^2 and s become m^2 and s; the fitted D is SI', () => {
    const f = runFit('msd', good, parseFitOptions('msd', {}));
    expect(f.parameters.diffusivity!.unit).toBe('m^2/s');
    expect(f.parameters.diffusivity!.value).toBeGreaterThan(0.19e-12);
    expect(f.parameters.diffusivity!.value).toBeLessThan(0.22e-12);
  });
  it('options meant for tracks are reported as unused on an MSD curve', () => {
    const f = runFit('msd', good, parseFitOptions('msd', { maxLag: '2 s', lags: 8 }));
    expect(f.notes.join(' ')).toMatch(/options maxLag, lags apply to tracked positions only/);
    expect(runFit('msd', good, parseFitOptions('msd', {})).notes.join(' ')).not.toMatch(/tracked positions only/);
  });
  it('weighting of a curve: the variance model by default, equal weights on request, the sd column when given; GLS refused', () => {
    const vm = runFit('msd', good, parseFitOptions('msd', {}));
    expect(vm.weighting).toBe('relative-variance-model');
    expect(vm.standardErrorsHonest).toBe(false);
    const ols = runFit('msd', good, parseFitOptions('msd', { weighting: 'unweighted' }));
    expect(ols.weighting).toBe('unweighted');
    expect(ols.notes.join(' ')).toMatch(/unweighted on purpose/);
    const withSd = good.replace('msd [um^2]', 'msd [um^2],sd [um^2]').replace(/\n(\d[^\n]*)/g, '\n$1,0.01');
    expect(runFit('msd', withSd, parseFitOptions('msd', {})).weighting).toBe('weighted');
    const sdIgnored = runFit('msd', withSd, parseFitOptions('msd', { weighting: 'unweighted' }));
    expect(sdIgnored.weighting).toBe('unweighted');
    expect(sdIgnored.notes.join(' ')).toMatch(/sd column was not used/);
    expect(problems('msd', good, { weighting: 'gls-covariance' })[0]!.path).toBe('options.weighting');
    expect(problems('msd', 'track,t [s],x [um],y [um]\n1,0,0,0\n1,0.1,0.1,0\n', { weighting: 'relative-variance-model' })[0]!.path).toBe('options.weighting');
  });
  it('tracked positions: errors name the line (duplicate times, a track id column read as a number)', () => {
    const dup = 'track,t [s],x [um],y [um]\n1,0,0,0\n1,0.1,0.1,0\n1,0.1,0.2,0\n';
    expect(problems('msd', dup)[0]).toEqual({ path: 'line 4, column 2 (t [s])', message: 'track 1 has two positions at the same time' });
    expect(problems('msd', 'track,t [s],x [um],y [um]\nA,0,0,0\n')[0]).toEqual({ path: 'line 2, column 1 (track)', message: 'not a number: "A"' });
    expect(problems('msd', 'track,t [s],x [um],y\n1,0,0,0\n1,1,1,1\n')[0]!.message).toMatch(/give the unit of the y in brackets/);
  });
  it('a JSON table gives the same fit as the CSV', () => {
    const json = { 'lag [s]': [0.1, 0.2, 0.5, 1, 2], 'msd [um^2]': [0.09, 0.17, 0.41, 0.83, 1.61] };
    const a = runFit('msd', good, parseFitOptions('msd', {}));
    const b = runFit('msd', json, parseFitOptions('msd', {}));
    expect(b.parameters).toEqual(a.parameters);
    expect(problems('msd', { 'lag [s]': [1, 2], 'msd [um^2]': [1] })[0]!.path).toBe('data.msd [um^2]');
  });
  it('kinetics with units gives a per-particle turnover from the assay concentration', () => {
    // r = V c/(K + c) with V = 2 uM/s, K = 50 uM, exact; enzyme 10 nM ⇒ V/(c_E N_A) per molecule
    const cs = [5, 10, 25, 50, 100, 200, 400];
    const csv = 'substrate [uM],rate [uM/s]\n' + cs.map((c) => `${c},${(2 * c) / (50 + c)}`).join('\n');
    const f = runFit('kinetics', csv, parseFitOptions('kinetics', { enzymeConcentration: '10 nM' }));
    expect(f.parameters.maxRate!.value).toBeCloseTo(2e-3, 12); // 2 uM/s = 2e-3 mol/(m^3 s)
    expect(f.parameters.michaelis!.value).toBeCloseTo(0.05, 10);
    expect(f.parameters.maxRatePerParticle!.value / (2e-3 / (1e-5 * 6.02214076e23))).toBeCloseTo(1, 9);
    expect(f.parameters.maxRatePerParticle!.unit).toBe('mol/s');
  });
});
