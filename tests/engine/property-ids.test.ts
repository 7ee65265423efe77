/**
 * Ids that are JavaScript property names (`constructor`, `toString`,
 * `hasOwnProperty`, `valueOf`, `__proto__`) are ordinary ids: every keyed
 * lookup by a user id goes through a Map or an own-property read.
 *
 * The independent expectation is the established behaviour with ordinary ids:
 * the same mixture, shelf or plan with the ids renamed (`chem-a`, `sp-a`, …)
 * must give the same analysis, warnings and bench sheet, name for name. Before
 * the fix a chemical called `constructor` lost its `no-concentration` warning
 * (the lookup found Object.prototype.constructor) and a species called
 * `hasOwnProperty` got a spurious "no usable stock" error on the bench sheet.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import type { Mixture } from '../../server/engine/types.js';
import { issueList, MixtureFileError, parseMixture } from '../../server/schema/mixture.js';
import { DEMO_SHELF } from '../../server/shelf/seed.js';
import { shelfSampleSchema } from '../../server/shelf/service.js';
import { freshApp } from '../helpers/app.js';
import { chemical, constant, mixture, species } from '../helpers/mixtures.js';
import { postPlan } from '../helpers/plans.js';

/** Replace every id by its ordinary name: exact string values, object keys and words inside text. */
function rename(x: unknown, names: Record<string, string>): unknown {
  const map = new Map(Object.entries(names));
  const words = new RegExp(`(?<![A-Za-z0-9_])(${[...map.keys()].map((k) => k.replace(/[$]/g, '\\$&')).join('|')})(?![A-Za-z0-9_])`, 'g');
  const walk = (v: unknown): unknown => {
    if (typeof v === 'string') return map.has(v) ? map.get(v) : v.replace(words, (w) => map.get(w)!);
    if (Array.isArray(v)) return v.map(walk);
    if (v !== null && typeof v === 'object') return Object.fromEntries(Object.entries(v).map(([k, w]) => [map.get(k) ?? k, walk(w)]));
    return v;
  };
  return walk(x);
}

describe('the engine', () => {
  const build = (c1: string, c2: string, s1: string, s2: string): Mixture => {
    const m = mixture(
      [chemical(c1, 1.4e-9, 0, 100), { ...chemical(c2, 2e-9, 0, 0.26), solubility: 1.3 }],
      [
        { ...species(s1, 0.22e-12, 2e15, [constant(c1, -2e-16, 5e-11), constant(c2, 1e-16, 0)]), materialDensity: 2000 },
        species(s2, 41e-12, 1e18, [{ chemical: c1, activity: { kind: 'saturating', maxRate: 3.3e-19, michaelis: 80, product: c2, productYield: 0.5 }, mobility: 5e-12 }], 5.2e-9),
      ],
      'sealed',
    );
    m.chamber.depth = 1e-4;
    return m;
  };

  it('constructor, __proto__, toString and hasOwnProperty as ids give the same analysis as chem-a, chem-b, sp-a, sp-b', () => {
    const odd = analyze(build('constructor', '__proto__', 'toString', 'hasOwnProperty'));
    const plain = analyze(build('chem-a', 'chem-b', 'sp-a', 'sp-b'));
    // a computed key: a literal `__proto__: …` would set the prototype instead of making a key
    expect(rename(odd, { constructor: 'chem-a', ['__proto__']: 'chem-b', toString: 'sp-a', hasOwnProperty: 'sp-b' })).toEqual(plain);
    // and the checks did run: fuel, gas, settling, with their warnings
    expect(plain.checks.gas.map((g) => g.chemical)).toEqual(['chem-b']);
    expect(plain.checks.sedimentation.map((s) => s.species)).toEqual(['sp-a']);
    expect(plain.warnings.map((w) => w.code)).toContain('sedimentation');
  });
});

describe('the mixture file', () => {
  const doc = (c: string, s: string) => ({
    chemicals: [{ id: c, diffusivity: '1.4e-9 m^2/s', concentration: '100 mM' }],
    species: [{ id: s, diffusivity: '0.22 um^2/s', radius: '1 um', density: '2e-3 um^-3', materialDensity: '2 g/mL', couplings: [{ chemical: c, activity: '-2e-16 mol/s', mobility: '50 um^2/(s*mM)' }] }],
    chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' },
  });

  it('constructor / valueOf read and analyse as chem-a / sp-a', () => {
    const odd = analyze(parseMixture(JSON.parse(JSON.stringify(doc('constructor', 'valueOf')))));
    const plain = analyze(parseMixture(doc('chem-a', 'sp-a')));
    expect(rename(odd, { constructor: 'chem-a', valueOf: 'sp-a' })).toEqual(plain);
  });

  it('__proto__ is refused by the id rule (it starts with an underscore), with its path', () => {
    try {
      parseMixture(JSON.parse(JSON.stringify(doc('__proto__', 'sp-a'))));
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(MixtureFileError);
      expect((e as MixtureFileError).problems[0]).toMatch(/^chemicals\[0\]\.id: an id is letters, digits/);
    }
  });
});

describe('the shelf and the bench sheet', () => {
  // The demo peroxide, oxygen and two Pt Janus batches, under other ids.
  const demo = JSON.parse(readFileSync(DEMO_SHELF, 'utf8')) as { chemicals: { id: string }[]; species: { id: string }[] };
  const original = { h2o2: 0, o2: 0, 'ptj-1um-b09': 0, 'ptj-1um-b07': 0 };
  function shelf(names: Record<keyof typeof original, string>) {
    const keep = (r: { id: string }) => Object.hasOwn(original, r.id);
    const picked = { chemicals: demo.chemicals.filter(keep), species: demo.species.filter(keep) };
    return { format: 'brink-shelf', version: 1, ...(rename(picked, names) as object) };
  }
  const oddNames = { h2o2: 'constructor', o2: 'toString', 'ptj-1um-b09': 'hasOwnProperty', 'ptj-1um-b07': 'valueOf' };
  const plainNames = { h2o2: 'chem-a', o2: 'chem-b', 'ptj-1um-b09': 'sp-a', 'ptj-1um-b07': 'sp-b' };
  const back = { constructor: 'chem-a', toString: 'chem-b', hasOwnProperty: 'sp-a', valueOf: 'sp-b' };

  async function run(names: typeof oddNames) {
    const app = await freshApp();
    const imp = await app.inject({ method: 'POST', url: '/api/shelf/import', payload: shelf(names) });
    expect(imp.statusCode).toBe(200);
    // only the peroxide's concentration is given: the oxygen must get `no-concentration`
    const sample = { species: [{ id: names['ptj-1um-b09'], volumeFraction: '0.1 percent' }], chemicals: { [names.h2o2]: '200 mM' }, chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' } };
    const analysis = (await app.inject({ method: 'POST', url: '/api/analyze', payload: sample })).json();
    // and the other way round: only the oxygen given, the peroxide (here `constructor`) is missing
    const other = { ...sample, chemicals: { [names.o2]: '0.26 mM' } };
    const missingFuel = (await app.inject({ method: 'POST', url: '/api/analyze', payload: other })).json();
    const plan = await postPlan(app, { name: 'ids', base: sample.species, chemicals: sample.chemicals, chamber: sample.chamber, boundary: 'stationary', candidates: [names['ptj-1um-b07']] });
    expect(plan.statusCode).toBe(201);
    const id = plan.json().id;
    // a stock given for the fuel only: the species' stocks must still come from the shelf
    const stocks = { [names.h2o2]: { molarConcentration: '9.79 M', solutionDensity: '1.11 g/mL' } };
    const sheet = await app.inject({ method: 'POST', url: `/api/plans/${id}/sheet?format=json`, payload: { stocks } });
    await app.close();
    return { analysis, missingFuel, sheet: { status: sheet.statusCode, body: sheet.json() } };
  }

  it('gives the same analysis, warnings and sheet with constructor/toString/hasOwnProperty/valueOf as with ordinary ids', async () => {
    const odd = await run(oddNames);
    const plain = await run(plainNames);
    expect(plain.analysis.warnings.filter((w: { code: string }) => w.code === 'no-concentration').map((w: { chemical: string }) => w.chemical)).toEqual(['chem-b']);
    expect(odd.analysis.warnings.filter((w: { code: string }) => w.code === 'no-concentration').map((w: { chemical: string }) => w.chemical)).toEqual(['toString']);
    expect(odd.missingFuel.warnings.filter((w: { code: string }) => w.code === 'no-concentration').map((w: { chemical: string }) => w.chemical)).toEqual(['constructor']);
    expect(odd.missingFuel.mixture.chemicals.find((c: { id: string }) => c.id === 'constructor').concentration).toBe(0);
    const strip = (r: { revisions?: unknown }) => ({ ...r, revisions: undefined });
    expect(rename(strip(odd.analysis), back)).toEqual(strip(plain.analysis));
    expect(rename(strip(odd.missingFuel), back)).toEqual(strip(plain.missingFuel));
    expect(plain.sheet.status).toBe(200);
    expect(odd.sheet.status).toBe(200);
    // sections are text made from the fields compared here (ids inside sentences, which rename does not reach)
    const sheetOf = (b: Record<string, unknown>) => ({ ...b, sections: undefined, printedAt: 0, plan: { ...(b.plan as object), createdAt: 0 } });
    expect(rename(sheetOf(odd.sheet.body), back)).toEqual(sheetOf(plain.sheet.body));
    expect((odd.sheet.body as { stocks: { id: string; source: string }[] }).stocks.map((s) => [s.id, s.source])).toEqual([
      ['hasOwnProperty', 'shelf'],
      ['valueOf', 'shelf'],
      ['constructor', 'option'],
    ]);
  }, 60_000);

  it('a "__proto__" key in a sample\'s chemicals is refused with its path, not dropped (zod strips it silently)', async () => {
    const body = '{"species":[{"id":"ptj-1um-b07","volumeFraction":"0.1 percent"}],"chemicals":{"h2o2":"200 mM","__proto__":"1 mM"},"chamber":{"walls":"sealed","length":"2 mm"}}';
    // JSON.parse keeps "__proto__" as an own key; the schema must say it is not allowed
    const parsed = shelfSampleSchema.safeParse(JSON.parse(body));
    expect(parsed.success).toBe(false);
    expect(issueList(parsed.error!)).toEqual([{ path: 'chemicals.__proto__', message: 'the key "__proto__" is not allowed' }]);
    // over HTTP, fastify's JSON parser already refuses such a body (prototype-poisoning guard)
    const app = await freshApp({ demo: true });
    const r = await app.inject({ method: 'POST', url: '/api/analyze', payload: body, headers: { 'content-type': 'application/json' } });
    await app.close();
    expect(r.statusCode).toBe(400);
  });
});
