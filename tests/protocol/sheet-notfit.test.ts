/**
 * Plans that do not fit (docs/model.md §11): a sheet-level explanation instead of a sheet, in every format, with
 * 422 (the request cannot be carried out as asked), also through the Planner page's HTML link; the options it
 * offers are each tried by planning again with them, and this test takes each one and gets a sheet (200).
 */
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../server/cli.js';
import { buildApp, type App } from '../../server/http/app.js';
import type { FitOption, NotFitSheet } from '../../server/protocol/sheet.js';
import { seedDemoShelf } from '../../server/shelf/seed.js';
import { openDatabase } from '../../server/store/db.js';
import { planRequest, postPlan } from '../helpers/plans.js';

let app: App;
let id = 0;
let dbPath = '';
// a 10 µL sample: the master mix, the top doses and the fuel's working solution do not fit in it (the shelf's stocks)
const tooSmall = { sampleVolume: '10 uL' };
// the dopant's stock at 0.05 mg/mL instead of the shelf's 10 mg/mL (1 % w/v): 200 × more dilute than the shelf's,
// more dilute than the top doses themselves, so no sample volume can help
const tooDilute = { stocks: { 'ptj-1um-b07': { massConcentration: '0.05 mg/mL' } } };
beforeAll(async () => {
  dbPath = join(mkdtempSync(join(tmpdir(), 'brink-notfit-')), 'n.sqlite');
  const db = openDatabase(dbPath);
  seedDemoShelf(db);
  app = await buildApp({ config: { closeDatabase: true }, db });
  id = (await postPlan(app, { ...planRequest, uncertainty: undefined })).json().id;
});
afterAll(async () => {
  await app.close();
});

const post = (format: string, body: Record<string, unknown>) => app.inject({ method: 'POST', url: `/api/plans/${id}/sheet?format=${format}`, payload: body });

describe('a plan whose volumes do not fit', () => {
  it('JSON: 422 with fits false, the reasons, the options, the sections and the error fields', async () => {
    const r = await post('json', tooSmall);
    expect(r.statusCode).toBe(422);
    const b = r.json() as NotFitSheet & { error: string; message: string };
    expect(b).toMatchObject({ error: 'domain', code: 'impossible-volumes', fits: false, candidate: { id: 'ptj-1um-b07' } });
    expect(b.message).toMatch(/larger sample volume|would fit/);
    expect(b.reasons.length).toBeGreaterThan(0);
    expect(b.options.map((o) => o.option)).toEqual(['sampleVolume', 'stocks.ptj-1um-b07', 'doses']);
    expect(b.sections.map((s) => s.id)).toEqual(['title', 'not-fit']);
    // a stock more dilute than the doses: no sample volume helps, and none is offered; a stronger stock is
    const d = (await post('json', tooDilute)).json() as NotFitSheet;
    expect(d.options.map((o) => o.option)).toEqual(['stocks.ptj-1um-b07']);
  });

  it('each option offered makes the sheet (200) when given, and the sample volume offered is the smallest listed that fits', async () => {
    const apply = (base: Record<string, unknown>, o: FitOption): Record<string, unknown> => {
      if (o.option === 'sampleVolume') return { ...base, sampleVolume: o.value };
      if (o.option === 'doses') return { ...base, doses: o.value.split(',') };
      expect(o.option.startsWith('stocks.')).toBe(true);
      return { ...base, stocks: { [o.option.slice(7)]: { density: o.value, description: 'as the option says' } } };
    };
    let tried = 0;
    for (const base of [tooSmall, tooDilute]) {
      const b = (await post('json', base)).json() as NotFitSheet;
      for (const o of b.options) {
        const r = await post('json', apply(base, o));
        expect(r.statusCode, `${o.text}: ${r.body.slice(0, 300)}`).toBe(200);
        tried++;
      }
    }
    expect(tried).toBe(4);
    // 20 µL is offered for a 10 µL sample; the nice volume below it (the current 10 µL) is the one that failed
    const sv = ((await post('json', tooSmall)).json() as NotFitSheet).options[0]!;
    expect(sv).toMatchObject({ option: 'sampleVolume', value: '20 uL', text: 'a sample volume of 20 µL (now 10 µL): every tube then fits' });
  });

  it('no stock is offered that cannot exist (denser than spheres pack), and no sample volume where none can help', async () => {
    // the demo beads: radius 1 µm (demo shelf), 4/3 π (1e-6 m)³ = 4.18879e-18 m³ = 4.18879e-12 mL each; the densest
    // packing of equal spheres is π/(3√2) = 0.74048 (Kepler's conjecture, proved by Hales 2005), so no stock of them
    // holds more than 0.74048 / 4.18879e-12 = 1.768e11 particles/mL. 1000 × the threshold (1.433e8 /mL, this plan)
    // is 1.43e11 /mL in the tube, which only a stock above that bound could deliver with room for the rest.
    const bound = Math.PI / (3 * Math.SQRT2) / ((4 / 3) * Math.PI * 1e-12);
    const r = (await post('json', { doseFactors: [0, 1, 1000] })).json() as NotFitSheet;
    expect(r.code).toBe('impossible-volumes');
    for (const o of r.options.filter((x) => x.option.startsWith('stocks.ptj'))) expect(Number.parseFloat(o.value)).toBeLessThanOrEqual(bound);
    expect(r.options.map((o) => o.option)).not.toContain('stocks.ptj-1um-b07');
    // nor a sample volume: undiluted, the top dose alone is 1.433e11 / 1.194e9 = 120 tubes' worth of stock
    expect(r.reasons.join(' ')).not.toMatch(/larger sample volume/);
    expect(r.reasons.join(' ')).toMatch(/No sample volume helps/);
    // the too-dilute stock likewise: the reason no longer asks for a larger sample
    const d = (await post('json', tooDilute)).json() as NotFitSheet;
    expect(d.reasons.join(' ')).not.toMatch(/larger sample volume/);
  });

  it('HTML (the page link) and Markdown: the explanation as a page, 422', async () => {
    const html = await post('html', tooSmall);
    expect(html.statusCode).toBe(422);
    expect(html.headers['content-type']).toMatch(/^text\/html/);
    expect(html.body).toMatch(/^<!doctype html>/);
    expect(html.body).toContain('<h2>Why there is no sheet</h2>');
    expect(html.body).toContain('What would fix it');
    const md = await post('md', tooSmall);
    expect(md.statusCode).toBe(422);
    expect(md.headers['content-type']).toMatch(/^text\/markdown/);
    expect(md.body).toContain('## Why there is no sheet');
    expect(md.body).toMatch(/^- a sample volume of \d+ µL/m);
  });

  it('brink sheet prints the explanation and exits 2', async () => {
    let out = '';
    let err = '';
    const io = { out: (t: string) => (out += t), err: (t: string) => (err += t) };
    const opts = join(mkdtempSync(join(tmpdir(), 'brink-notfit-opts-')), 'o.json');
    writeFileSync(opts, JSON.stringify(tooSmall));
    expect(await main(['sheet', String(id), '--db', dbPath, '--format', 'md', '--options', opts], io)).toBe(2);
    expect(out).toContain('## Why there is no sheet');
    expect(err).toMatch(/^cannot do that \(impossible-volumes\)/);
    expect(err).toMatch(/would fit: a sample volume of/);
  });
});

describe('a candidate that does not cross', () => {
  it('explains why and names the candidates that would, in every format', async () => {
    const p = (await postPlan(app, planRequest)).json();
    const r = await app.inject({ method: 'GET', url: `/api/plans/${p.id}/sheet?format=json&candidate=catb-0.22-l04` });
    expect(r.statusCode).toBe(422);
    const b = r.json() as NotFitSheet;
    expect(b).toMatchObject({ fits: false, code: 'candidate-infeasible' });
    expect(b.options).toEqual([{ option: 'candidate', value: 'ptj-1um-b07', text: expect.stringMatching(/ptj-1um-b07/) }]);
    const md = await app.inject({ method: 'GET', url: `/api/plans/${p.id}/sheet?format=md&candidate=catb-0.22-l04` });
    expect(md.statusCode).toBe(422);
    expect(md.body).toContain('catb-0.22-l04');
  });
});
