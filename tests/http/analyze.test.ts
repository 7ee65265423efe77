/**
 * POST /api/analyze: a sample from shelf species gives the analyze contract plus
 * the revisions it used; amounts convert through the species' data.
 */
import supertest from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import type { App } from '../../server/http/app.js';
import { freshApp } from '../helpers/app.js';

let app: App;

/** Avogadro constant, mol⁻¹: exact in the 2019 SI (CODATA 2018), written here rather than read from the engine. */
const AVOGADRO = 6.02214076e23;
beforeAll(async () => {
  app = await freshApp({ demo: true });
});
afterAll(async () => {
  await app.close();
});

const sample = (species: unknown[], extra: Record<string, unknown> = {}) => ({
  species,
  chemicals: { h2o2: '200 mM' },
  chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' },
  ...extra,
});

describe('POST /api/analyze', () => {
  it('returns the contract and the revisions used (through supertest on the real server)', async () => {
    const r = await supertest(app.server).post('/api/analyze').send(sample([{ id: 'ptj-1um-b07', volumeFraction: '0.1 percent' }])).expect(200);
    expect(r.body.state).toBe('stationary');
    expect(r.body.fastestMode).toMatchObject({ index: 1 });
    expect(r.body.revisions.species).toEqual([{ id: 'ptj-1um-b07', revision: 1, revisionId: expect.any(Number) }]);
    expect(r.body.revisions.chemicals.map((c: { id: string }) => c.id)).toEqual(['h2o2', 'o2']);
    // o2 was not given: taken as 0, said so once (by the engine, not again by the shelf)
    expect(r.body.warnings.filter((w: { code: string }) => w.code === 'no-concentration').map((w: { chemical: string }) => w.chemical)).toEqual(['o2']);
    // the same numbers as the engine on the mixture it reports
    expect(r.body.growthRate).toBe(analyze(r.body.mixture).growthRate);
  });

  it('converts density, volume fraction, mass and molar concentration', async () => {
    const rho = async (amount: Record<string, unknown>, id = 'ptj-1um-b07') => {
      const r = await app.inject({ method: 'POST', url: '/api/analyze', payload: sample([{ id, ...amount }]) });
      expect(r.statusCode).toBe(200);
      return r.json().mixture.species[0].density as number;
    };
    const V = (4 / 3) * Math.PI * 1e-18;
    expect(await rho({ density: '2e-4 um^-3' })).toBeCloseTo(2e14, -2);
    expect((await rho({ volumeFraction: '0.1 percent' })) / (0.001 / V)).toBeCloseTo(1, 12);
    // 1 mg/mL of 2.0 g/mL spheres of 1 µm radius: ρ = c/(ρ_mat V)
    expect((await rho({ massConcentration: '1 mg/mL' })) / (1 / (2000 * V))).toBeCloseTo(1, 12);
    // an enzyme of molar mass 250 kg/mol at 1 nM: ρ = c N_A
    expect((await rho({ molarConcentration: '1 nM' }, 'catalase-e3')) / (1e-6 * AVOGADRO)).toBeCloseTo(1, 12);
    // and its mass concentration through the molar mass
    expect((await rho({ massConcentration: '0.25 mg/mL' }, 'catalase-e3')) / ((0.25 / 250) * AVOGADRO)).toBeCloseTo(1, 12);
  });

  it('errors: unknown species (400 with the path), two amounts, wrong dimension, missing chamber length', async () => {
    const unknown = await app.inject({ method: 'POST', url: '/api/analyze', payload: sample([{ id: 'ghost', density: 1e14 }]) });
    expect(unknown.statusCode).toBe(400);
    expect(unknown.json().problems).toEqual([{ path: 'species[0].id', message: 'no species "ghost" on the shelf' }]);
    const two = await app.inject({ method: 'POST', url: '/api/analyze', payload: sample([{ id: 'ptj-1um-b07', density: 1e14, volumeFraction: 0.01 }]) });
    expect(two.json().problems[0].path).toBe('species[0].density');
    const dim = await app.inject({ method: 'POST', url: '/api/analyze', payload: sample([{ id: 'ptj-1um-b07', volumeFraction: '2 mM' }]) });
    expect(dim.json().problems[0]).toEqual({ path: 'species[0].volumeFraction', message: 'expected dimensionless, got "2 mM" (amount/length^3)' });
    const noLen = await app.inject({ method: 'POST', url: '/api/analyze', payload: sample([{ id: 'ptj-1um-b07', density: 1e14 }], { chamber: { walls: 'sealed' } }) });
    expect(noLen.json().problems[0].path).toBe('chamber.length');
    const fuel = await app.inject({ method: 'POST', url: '/api/analyze', payload: sample([{ id: 'ptj-1um-b07', density: 1e14 }], { chemicals: { nope: '1 mM' } }) });
    expect(fuel.json().problems[0]).toEqual({ path: 'chemicals.nope', message: 'no chemical "nope" on the shelf' });
  });

  it('uses the current revision, and a retired species still analyses with a warning', async () => {
    const before = (await app.inject({ method: 'POST', url: '/api/analyze', payload: sample([{ id: 'ptj-1um-b09', volumeFraction: '0.1 percent' }]) })).json();
    expect(before.state).toBe('stable');
    await app.inject({ method: 'POST', url: '/api/species/ptj-1um-b09/retire', payload: {} });
    const after = (await app.inject({ method: 'POST', url: '/api/analyze', payload: sample([{ id: 'ptj-1um-b09', volumeFraction: '0.1 percent' }]) })).json();
    expect(after.warnings.map((w: { code: string }) => w.code)).toContain('retired-species');
    expect(after.revisions.species[0].revision).toBe(2);
    expect(after.growthRate).toBe(before.growthRate);
  });

  it('/api/analyze/mixture takes a mixture file', async () => {
    const r = await app.inject({
      method: 'POST',
      url: '/api/analyze/mixture',
      payload: { chemicals: [{ id: 'f', diffusivity: '1.4e-9 m^2/s' }], species: [{ id: 'a', diffusivity: '0.2 um^2/s', radius: '1 um', density: '1e-4 um^-3' }], chamber: { walls: 'sealed', length: '1 mm' } },
    });
    expect(r.statusCode).toBe(200);
    expect(r.json().state).toBe('stable');
  });
});

describe('POST /api/analyze/mixture: a fuel with no concentration', () => {
  it('warns no-concentration and fuel-runs-out, and the fuel check says the fuel is absent', async () => {
    const doc = {
      chemicals: [{ id: 'h2o2', diffusivity: '1.4e-9 m^2/s' }],
      species: [{ id: 'pt', diffusivity: '0.22 um^2/s', radius: '1 um', volumeFraction: '0.1 percent', couplings: [{ chemical: 'h2o2', activity: '-2e-16 mol/s', mobility: '50 um^2/(s*mM)' }] }],
      chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' },
    };
    const r = await app.inject({ method: 'POST', url: '/api/analyze/mixture', payload: doc });
    expect(r.statusCode).toBe(200);
    const codes = r.json().warnings.map((w: { code: string }) => w.code);
    expect(codes).toContain('no-concentration');
    expect(codes).toContain('fuel-runs-out');
    expect(r.json().checks.fuel).toEqual([{ chemical: 'h2o2', consumptionRate: expect.any(Number), lifetime: 0, absent: true }]);
    // |α| ρ by hand: 2e-16 mol/s × 0.001/((4/3)π (1e-6 m)³) = 2e-16 × 2.3873e14 = 4.7746e-2 mol m⁻³ s⁻¹
    expect(r.json().checks.fuel[0].consumptionRate).toBeCloseTo(4.7746e-2, 5);
  });
});
