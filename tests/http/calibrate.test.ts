/** Calibration over HTTP: compute-only fits, stored measurements, and applying a fit with provenance. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { freshApp, speciesRecord } from '../helpers/app.js';

let app: App;
beforeAll(async () => {
  app = await freshApp({ demo: true });
});
afterAll(async () => {
  await app.close();
});

const msdCsv = 'lag [s],msd [um^2]\n0.1,0.092\n0.2,0.175\n0.5,0.44\n1,0.90\n2,1.77\n5,4.41\n';
// v = −μ g with μ ≈ 1e-10 m^5/(mol s) = 100 um^2/(s*mM): 1 mM/mm = 1000 mol/m^4 → 0.1 um/s
const driftCsv = 'gradient [mM/mm],velocity [um/s]\n-2,0.21\n-1,0.09\n1,-0.11\n2,-0.19\n3,-0.31\n';

describe('fits over HTTP', () => {
  it('POST /api/fits/msd and /drift fit and store nothing', async () => {
    const r = await app.inject({ method: 'POST', url: '/api/fits/msd', payload: { data: msdCsv, options: { model: 'passive-2d' } } });
    expect(r.statusCode).toBe(200);
    const d = r.json().parameters.diffusivity;
    expect(d.unit).toBe('m^2/s');
    expect(d.value).toBeGreaterThan(0.2e-12);
    expect(d.value).toBeLessThan(0.24e-12);
    const dr = await app.inject({ method: 'POST', url: '/api/fits/drift', payload: { data: driftCsv } });
    expect(dr.json().parameters.mobility.value).toBeCloseTo(1.02e-10, 11);
    expect((await app.inject({ method: 'GET', url: '/api/species/ptj-1um-b07/measurements' })).json().measurements).toEqual([]);
  });

  it('POST /api/fits/msd with tracked positions: the MSD and its covariance, fitted by GLS', async () => {
    // Brownian tracks, D = 0.2 um^2/s, seeded (the simulation of tests/engine/fit/simulate.ts)
    const { simulateTracks, tracksCsv } = await import('../engine/fit/simulate.js');
    const csv = tracksCsv(simulateTracks({ dims: 2, D: 0.2e-12, v: 0, tau: 1, dt: 0.1, frames: 200, tracks: 40, seed: 77 }));
    const r = await app.inject({ method: 'POST', url: '/api/fits/msd', payload: { data: csv, options: { model: 'passive-2d', lags: 10 } } });
    expect(r.statusCode).toBe(200);
    const f = r.json();
    expect(f.weighting).toBe('gls-covariance');
    expect(f.covarianceSource).toMatch(/per-track time-averaged MSDs \(40 tracks/);
    expect(f.tracks).toMatchObject({ tracks: 40, positions: 8000, frameInterval: 0.1, units: 'tracks' });
    const d = f.parameters.diffusivity;
    expect(Math.abs(d.value - 0.2e-12)).toBeLessThan(4 * d.sd);
    expect(d.sd).toBeLessThan(0.05 * 0.2e-12);
    // a regular time grid is required, and the offending line named
    const bad = csv.replace(/\n1,0\.1000000000,/, '\n1,0.1300000000,');
    const e = await app.inject({ method: 'POST', url: '/api/fits/msd', payload: { data: bad, options: { model: 'passive-2d' } } });
    expect(e.statusCode).toBe(400);
    expect(e.json().problems[0]).toMatchObject({ path: 'line 3, column 2 (t [s])' });
    expect(e.json().problems[0].message).toMatch(/regular grid/);
  });

  it("a fit carries the data's sd column in SI (for error bars), and none without one", async () => {
    const withSd = 'lag [s],msd [um^2],sd [um^2]\n0.1,0.092,0.01\n0.2,0.175,0.02\n0.5,0.44,0.05\n1,0.90,0.1\n';
    const r = (await app.inject({ method: 'POST', url: '/api/fits/msd', payload: { data: withSd } })).json();
    expect(r.sd.map((s: number) => s / 1e-14)).toEqual([1, 2, 5, 10].map((x) => expect.closeTo(x, 12)));
    const drift = (await app.inject({ method: 'POST', url: '/api/fits/drift', payload: { data: 'gradient [mM/mm],velocity [um/s],sd [nm/s]\n-1,0.09,20\n1,-0.11,30\n' } })).json();
    expect(drift.sd.map((s: number) => s / 1e-9)).toEqual([20, 30].map((x) => expect.closeTo(x, 12)));
    expect((await app.inject({ method: 'POST', url: '/api/fits/msd', payload: { data: msdCsv } })).json().sd).toBeUndefined();
  });

  it('a table past the row bound is refused with a clear message', async () => {
    const rows = Array.from({ length: 500_001 }, (_, i) => `${i + 1},1`).join('\n');
    const r = await app.inject({ method: 'POST', url: '/api/fits/msd', payload: { data: `lag [s],msd [um^2]\n${rows}\n` } });
    expect(r.statusCode).toBe(400);
    expect(r.json().problems[0].message).toBe('at most 500000 data rows in one fit, got 500001');
  }, 30_000);

  it('errors name the line: 400 with problems', async () => {
    const r = await app.inject({ method: 'POST', url: '/api/fits/msd', payload: { data: 'lag [s],msd [um^2]\n1,x\n' } });
    expect(r.statusCode).toBe(400);
    expect(r.json().problems[0]).toEqual({ path: 'line 2, column 2 (msd [um^2])', message: 'not a number: "x"' });
  });
});

describe('measurements', () => {
  let msdId = 0;
  it('stores the raw data, the method, the fit, who and when', async () => {
    const r = await app.inject({
      method: 'POST',
      url: '/api/species/ptj-1um-b07/measurements',
      payload: { method: 'msd', data: msdCsv, options: { model: 'passive-2d' }, fileName: 'b07-msd-2026-11-30.csv', author: 'a student (invented)' },
    });
    expect(r.statusCode).toBe(201);
    const m = r.json();
    msdId = m.id;
    expect(m).toMatchObject({ species: 'ptj-1um-b07', method: 'msd', data: msdCsv, fileName: 'b07-msd-2026-11-30.csv', author: 'a student (invented)', applications: [] });
    expect(m.fit.parameters.diffusivity.value).toBeGreaterThan(0);
    expect((await app.inject({ method: 'GET', url: '/api/species/ptj-1um-b07/measurements' })).json().measurements).toHaveLength(1);
    expect((await app.inject({ method: 'POST', url: '/api/species/ghost/measurements', payload: { method: 'msd', data: msdCsv } })).statusCode).toBe(404);
  });

  it('applying a fit writes a new revision whose provenance links to the measurement', async () => {
    const cur = (await app.inject({ method: 'GET', url: '/api/species/ptj-1um-b07' })).json();
    const r = await app.inject({ method: 'POST', url: `/api/measurements/${msdId}/apply`, payload: { baseRevision: cur.revision, author: 'a student (invented)' } });
    expect(r.statusCode).toBe(200);
    const rev = r.json();
    expect(rev.revision).toBe(cur.revision + 1);
    // a curve fit's standard error understates the uncertainty (no covariance between lags): the note and the
    // provenance say so, since the shelf's sd feeds the planner's Monte Carlo
    expect(rev.note).toMatch(new RegExp(`^applied measurement ${msdId} \\(msd\\); its sd .* understates the uncertainty`));
    const fitted = (await app.inject({ method: 'GET', url: `/api/measurements/${msdId}` })).json();
    // written in the species' own unit (the demo shelf has "0.22 um^2/s"), rounded by the standard error:
    // the sd to two significant digits, the value to the same decimal place
    const fd = fitted.fit.parameters.diffusivity;
    const sdU = Number((fd.sd * 1e12).toPrecision(2));
    const place = 10 ** (Math.floor(Math.log10(sdU)) - 1);
    expect(rev.record.diffusivity.unit).toBe('um^2/s');
    expect(rev.record.diffusivity.input).toMatch(/^\d\.\d+ um\^2\/s$/);
    expect(rev.record.diffusivity.sdInput).toBe(`${sdU} um^2/s`);
    expect(Math.abs(rev.record.diffusivity.si * 1e12 - fd.value * 1e12)).toBeLessThanOrEqual(place / 2 + 1e-12);
    expect(Number(rev.record.diffusivity.input.split(' ')[0])).toBeCloseTo(Math.round((fd.value * 1e12) / place) * place, 12);
    expect(rev.record.diffusivity.sd * 1e12).toBeCloseTo(sdU, 12);
    expect(rev.record.diffusivity.provenance).toMatchObject({ source: 'measured', measurement: msdId, by: 'a student (invented)' });
    expect(rev.record.diffusivity.provenance.reference).toMatch(/b07-msd-2026-11-30\.csv.*understates the uncertainty/);
    // other values keep their own provenance
    expect(rev.record.radius).toEqual(cur.record.radius);
    // the history shows it, and the measurement points to the revision
    const h = (await app.inject({ method: 'GET', url: '/api/species/ptj-1um-b07/revisions' })).json();
    expect(h.revisions.at(-1).record.diffusivity.provenance.measurement).toBe(msdId);
    expect(fitted.applications).toEqual([{ revisionId: rev.revisionId, fields: ['diffusivity (diffusivity)'], createdAt: expect.any(String) }]);
    // a stale apply is refused like a stale edit
    expect((await app.inject({ method: 'POST', url: `/api/measurements/${msdId}/apply`, payload: { baseRevision: cur.revision } })).statusCode).toBe(409);
  });

  it("an active MSD fit can fix the rotation time from the species' own radius", async () => {
    // ABP 2D curve of D = 0.2 µm²/s, v = 1 µm/s, τ = 5.434 s (Stokes–Einstein–Debye for a = 1 µm at 25 °C)
    const tau = 5.434;
    const lags = [0.1, 0.2, 0.5, 1, 2, 5, 10, 20, 50];
    const msd = lags.map((t) => 4 * 0.2 * t + 2 * tau * tau * (t / tau + Math.exp(-t / tau) - 1));
    const data = 'lag [s],msd [um^2]\n' + lags.map((t, i) => `${t},${msd[i]! * (1 + 0.01 * Math.sin(7 * i))}`).join('\n');
    const r = await app.inject({ method: 'POST', url: '/api/species/ptj-1um-b07/measurements', payload: { method: 'msd', data, options: { model: 'active-2d', rotationFromSpeciesRadius: true } } });
    expect(r.statusCode).toBe(201);
    const p = r.json().fit.parameters;
    expect(p.rotationTime.fixed).toBe(true);
    expect(p.rotationTime.value).toBeCloseTo(tau, 2);
    expect(p.speed.value).toBeCloseTo(1e-6, 7);
    const alone = await app.inject({ method: 'POST', url: '/api/fits/msd', payload: { data, options: { model: 'active-2d', rotationFromSpeciesRadius: true } } });
    expect(alone.statusCode).toBe(400);
  });

  it('a species whose value was a bare SI number gets the unit of the data', async () => {
    const made = await app.inject({ method: 'POST', url: '/api/species', payload: { record: { ...speciesRecord('bare-si-bead'), diffusivity: 2.2e-13, couplings: [] } } });
    expect(made.statusCode).toBe(201);
    // lag in ms and MSD in nm^2: the data's unit for a diffusivity is nm^2/ms (1 nm^2/ms = 1e-15 m^2/s)
    const data = 'lag [ms],msd [nm^2]\n100,90000\n200,176000\n500,441000\n1000,880000\n2000,1770000\n';
    const m = (await app.inject({ method: 'POST', url: '/api/species/bare-si-bead/measurements', payload: { method: 'msd', data } })).json();
    const r = await app.inject({ method: 'POST', url: `/api/measurements/${m.id}/apply`, payload: { baseRevision: 1 } });
    expect(r.statusCode).toBe(200);
    const d = r.json().record.diffusivity;
    expect(d.unit).toBe('nm^2/ms');
    expect(d.input).toMatch(/^2\d\d(\.\d+)? nm\^2\/ms$/); // ≈ 0.22 um^2/s = 220 nm^2/ms
    expect(d.si / m.fit.parameters.diffusivity.value).toBeCloseTo(1, 2);
  });

  it('a fitted value on its bound cannot go on the shelf (422)', async () => {
    // an MSD that falls with the lag: with a free offset, the best D ≥ 0 is 0 (S is a parabola in D
    // whose vertex lies at a negative slope), on its bound
    const flat = 'lag [s],msd [um^2]\n1,0.5\n2,0.45\n3,0.41\n4,0.40\n';
    const m = (await app.inject({ method: 'POST', url: '/api/species/silica-1um-t01/measurements', payload: { method: 'msd', data: flat, options: { offset: true } } })).json();
    expect(m.fit.parameters.diffusivity).toMatchObject({ value: 0, sd: null, atBound: 'lower' });
    const cur = (await app.inject({ method: 'GET', url: '/api/species/silica-1um-t01' })).json();
    const r = await app.inject({ method: 'POST', url: `/api/measurements/${m.id}/apply`, payload: { baseRevision: cur.revision } });
    expect(r.statusCode).toBe(422);
    expect(r.json().code).toBe('at-bound');
  });

  it('a drift fit sets the mobility of the named coupling', async () => {
    const m = (await app.inject({ method: 'POST', url: '/api/species/ptj-1um-b09/measurements', payload: { method: 'drift', data: driftCsv } })).json();
    const cur = (await app.inject({ method: 'GET', url: '/api/species/ptj-1um-b09' })).json();
    const noChem = await app.inject({ method: 'POST', url: `/api/measurements/${m.id}/apply`, payload: { baseRevision: cur.revision } });
    expect(noChem.statusCode).toBe(400);
    expect(noChem.json().problems[0].path).toBe('chemical');
    const r = (await app.inject({ method: 'POST', url: `/api/measurements/${m.id}/apply`, payload: { baseRevision: cur.revision, chemical: 'h2o2' } })).json();
    const c = r.record.couplings.find((x: { chemical: string }) => x.chemical === 'h2o2');
    expect(c.mobility.si).toBeCloseTo(1.02e-10, 11);
    // in the coupling's own unit ("-30 um^2/(s*mM)" on the demo shelf): 1.02e-10 m^5/(mol s) = 102 um^2/(s*mM)
    expect(c.mobility.unit).toBe('um^2/(s*mM)');
    expect(c.mobility.input).toMatch(/^10\d(\.\d+)? um\^2\/\(s\*mM\)$/);
    expect(c.mobility.provenance.measurement).toBe(m.id);
    expect(c.activity).toEqual(cur.record.couplings[0].activity);
  });

  it('a kinetics fit in the file\'s own units cannot go on the shelf (422), one with units and an assay concentration can', async () => {
    const raw = (await app.inject({ method: 'POST', url: '/api/species/gox-e1/measurements', payload: { method: 'kinetics', data: 'c,r\n1,1\n2,1.6\n5,2.6\n10,3.2\n20,3.6\n' } })).json();
    const cur = (await app.inject({ method: 'GET', url: '/api/species/gox-e1' })).json();
    const refused = await app.inject({ method: 'POST', url: `/api/measurements/${raw.id}/apply`, payload: { baseRevision: cur.revision, chemical: 'glucose' } });
    expect(refused.statusCode).toBe(422);
    expect(refused.json().code).toBe('needs-particle-density');
    const cs = [1, 2, 5, 10, 30, 60, 120];
    const data = 'glucose [mM],rate [uM/s]\n' + cs.map((c) => `${c},${(5 * c) / (30 + c)}`).join('\n');
    const m = (await app.inject({ method: 'POST', url: '/api/species/gox-e1/measurements', payload: { method: 'kinetics', data, options: { enzymeConcentration: '10 nM' } } })).json();
    const r = await app.inject({ method: 'POST', url: `/api/measurements/${m.id}/apply`, payload: { baseRevision: cur.revision, chemical: 'glucose' } });
    expect(r.statusCode).toBe(200);
    const a = r.json().record.couplings.find((x: { chemical: string }) => x.chemical === 'glucose').activity;
    expect(a.michaelis.si).toBeCloseTo(30, 6);
    expect(a.michaelis.unit).toBe('mM'); // the coupling's own unit ("30 mM" on the demo shelf)
    expect(a.maxRate.si / (5e-3 / (1e-5 * 6.02214076e23))).toBeCloseTo(1, 6);
    expect(a.product).toBe('h2o2');
    expect(a.maxRate.provenance.measurement).toBe(m.id);
  });

  it('a kinetics fit keeps the coupling\'s stoichiometric yield (catalase makes half an O2 per H2O2, 2 H2O2 -> 2 H2O + O2)', async () => {
    const cur = (await app.inject({ method: 'GET', url: '/api/species/catalase-e3' })).json();
    expect(cur.record.couplings[0].activity.productYield).toBe(0.5);
    const cs = [5, 10, 20, 40, 80, 160, 320];
    const data = 'h2o2 [mM],rate [uM/s]\n' + cs.map((c) => `${c},${(2 * c) / (80 + c)}`).join('\n');
    const m = (await app.inject({ method: 'POST', url: '/api/species/catalase-e3/measurements', payload: { method: 'kinetics', data, options: { enzymeConcentration: '1 nM' } } })).json();
    const r = await app.inject({ method: 'POST', url: `/api/measurements/${m.id}/apply`, payload: { baseRevision: cur.revision, chemical: 'h2o2' } });
    expect(r.statusCode).toBe(200);
    const a = r.json().record.couplings[0].activity;
    expect(a.product).toBe('o2');
    expect(a.productYield).toBe(0.5);
    expect(a.michaelis.si).toBeCloseTo(80, 6);
  });
});
