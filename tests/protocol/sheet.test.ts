/** The bench sheet of a stored plan over the demo shelf: content, determinism, escaping, the hazard editor, the CLI. */
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../server/cli.js';
import type { App } from '../../server/http/app.js';
import { buildApp } from '../../server/http/app.js';
import type { Sheet } from '../../server/protocol/sheet.js';
import { seedDemoShelf } from '../../server/shelf/seed.js';
import { openDatabase } from '../../server/store/db.js';
import { freshApp } from '../helpers/app.js';
import { planRequest, postPlan } from '../helpers/plans.js';


let app: App;
let planId = 0;
beforeAll(async () => {
  app = await freshApp({ demo: true });
  planId = (await postPlan(app, planRequest)).json().id;
});
afterAll(async () => {
  await app.close();
});

const sheet = async (q = '') => (await app.inject({ method: 'GET', url: `/api/plans/${planId}/sheet?format=json${q}` })).json() as Sheet;

describe('bench sheet', () => {
  it('carries the plan, the revisions, the software version, stocks, volumes, controls, imaging and hazards', async () => {
    const s = await sheet();
    expect(s.plan).toMatchObject({ id: planId, boundary: 'stationary', dosing: 'add' });
    expect(s.candidate.id).toBe('ptj-1um-b07');
    expect(s.software).toEqual({ name: 'brink', version: expect.any(String) });
    expect(s.shelfRevisions.map((r) => r.id).sort()).toEqual(['catb-0.22-l04', 'h2o2', 'o2', 'ptj-1um-b07', 'ptj-1um-b09']);
    expect(s.stocks.map((x) => x.id)).toEqual(['ptj-1um-b09', 'ptj-1um-b07', 'h2o2']);
    // the controls by their tube codes (pipetting.ts): no dopant, no fuel, dopant alone
    expect(s.tubes.filter((x) => x.kind !== 'series').map((x) => [x.code, x.kind])).toEqual([['C0', 'no-dopant'], ['CF', 'no-fuel'], ['CA', 'dopant-alone']]);
    // fuel last wherever fuel is added; the no-fuel control has none
    for (const x of s.samples) {
      const fuel = x.steps.findIndex((st) => st.what === 'hydrogen peroxide');
      if (x.name.includes('control: no fuel')) expect(fuel).toBe(-1);
      else expect(fuel).toBe(x.steps.length - 1);
    }
    // every pipetted volume at or above the 1 µL minimum
    const vols = [...s.dilutions.flatMap((d) => d.steps), ...(s.masterMix?.steps ?? []), ...s.samples.flatMap((x) => x.steps)].map((st) => st.volume);
    for (const v of vols) {
      expect(v.unit).toBe('µL');
      expect(v.value).toBeGreaterThanOrEqual(1);
    }
    // imaging: frame interval ≤ a tenth of the growth time; duration five growth times or the fuel life
    const tg = s.prediction.atMargin!.growthTime!.value;
    expect(s.imaging.frameInterval.value).toBeLessThanOrEqual(tg / 10);
    expect(s.imaging.duration.value).toBeCloseTo(Math.min(5 * tg, s.imaging.fuelLife?.value ?? Infinity), -1);
    // hazards, each concentration handled (CLP Annex VI limits for H₂O₂, index 008-003-00-9, from memory: Eye Dam. 1
    // H318 from 8 %, Eye Irrit. 2 H319 from 5 %): the 30 % stock bottle H318, the working solution W1 (2 M,
    // 2000 mM × 34.01 g/mol / 997 g/L = 6.82 %) H319, the 200 mM sample (0.682 %) below every band
    const h = s.hazards.find((x) => x.chemical === 'h2o2')!;
    expect(h.asHandled.map((x) => x.where)).toEqual([expect.stringMatching(/^stock bottle \(30 % w\/w\)/), expect.stringMatching(/^working solution W1 \(1999 mM, 6\.8\d % w\/w\)/), expect.stringMatching(/^in the sample \(at most 199\.9 mM, 0\.68\d % w\/w\)/)]);
    expect(h.asHandled.map((x) => x.classification.statements.map((st) => st.code))).toEqual([['H318'], ['H319'], []]);
    expect(h.asHandled[2]!.classification.status).toBe('below-limits');
    expect(h.verify).toMatch(/supplier(’|')s safety data sheet/);
    // the hazard block speaks to the bench: the data's own version and source as stored, the SDS first
    expect(h).toMatchObject({ version: 1, recordedBy: 'demo seed' });
    expect(h.verify).toMatch(/^Hazard data: version 1 of the shelf(’|')s record for hydrogen peroxide \(entered \d{4}-\d\d-\d\d by demo seed\)/);
    expect(h.verify).toMatch(/where they differ, the safety data sheet takes precedence/);
    expect(h.source).toMatch(/^Regulation \(EC\) No 1272\/2008 \(CLP\), Annex VI/);
    for (const text of [h.verify, h.source!]) expect(text).not.toMatch(/project's references|first four bands|recalled/);
    expect(s.safety.join(' ')).toMatch(/eye protection and gloves/);
    expect(s.safety.join(' ')).toMatch(/never close a vial, tube or chamber that holds catalyst and fuel/);
    expect(s.safety.join(' ')).toMatch(/Local regulations, your institution’s safety rules and the supplier’s safety data sheet take precedence/);
    expect(h.incompatibilities).toMatch(/platinum/);
    expect(h.disposal).toBeTruthy();
  });

  it('the default dose series brackets the uncertainty band', async () => {
    const s = await sheet();
    const doses = s.samples.filter((x) => x.role === 'series').map((x) => x.dose!.value);
    expect(Math.min(...doses)).toBeLessThanOrEqual(s.prediction.band!.p05!.value);
    expect(Math.max(...doses)).toBeGreaterThanOrEqual(s.prediction.band!.p95!.value);
    expect(doses).toContain(s.prediction.band!.p05!.value);
    expect(doses).toContain(s.prediction.band!.p95!.value);
  });

  it('the same plan printed twice is identical apart from the print date', async () => {
    const a = app.sheets.build(planId, {}, '2026-12-02T08:00:00.000Z');
    const b = app.sheets.build(planId, {}, '2026-12-03T09:30:00.000Z');
    // the print date is also in the sections' header line: compare with it replaced
    expect(JSON.stringify(a).replaceAll(a.printedAt, 'DATE')).toBe(JSON.stringify(b).replaceAll(b.printedAt, 'DATE'));
    for (const f of ['html', 'md'] as const) {
      expect(app.sheets.render(a, f).replaceAll(a.printedAt, 'DATE')).toBe(app.sheets.render(b, f).replaceAll(b.printedAt, 'DATE'));
    }
  });

  it('HTML and Markdown carry the sections and the print rules', async () => {
    const html = (await app.inject({ method: 'GET', url: `/api/plans/${planId}/sheet?format=html&paper=Letter` })).body;
    expect(html).toContain('@media print');
    expect(html).toContain('size: letter');
    expect(html).toContain('thead { display: table-header-group; }');
    expect(html).toContain('☐');
    // blank fields to fill in (changed on purpose in issue 10: one key/value row each, from the section model)
    expect(html).toMatch(/<tr><th>Operator<\/th><td class="fill"><\/td><\/tr><tr><th>Date<\/th><td class="fill"><\/td><\/tr>/);
    expect(html).toContain('Hazards and safe handling');
    const md = (await app.inject({ method: 'GET', url: `/api/plans/${planId}/sheet?format=md` })).body;
    expect(md).toContain('## Hazards and safe handling');
    expect(md).toContain('| [ ] |');
    // nothing an operator at the bench cannot consult; the version of the hazard data and the SDS instead
    for (const text of [html, md]) {
      expect(text).not.toMatch(/project(&#39;|'|’)s references|first four bands/);
      expect(text).toMatch(/version 1 of the shelf(&#39;|'|’)s record for hydrogen peroxide/);
      expect(text).toMatch(/Source of these data, as stored on the shelf/);
    }
  });

  it('user text is escaped in HTML and Markdown', async () => {
    const evil = '<img src=x onerror=alert(1)>';
    const a = await freshApp({ demo: true });
    const cur = (await a.inject({ method: 'GET', url: '/api/species/ptj-1um-b07' })).json();
    await a.inject({ method: 'PUT', url: '/api/species/ptj-1um-b07', payload: { baseRevision: cur.revision, record: { ...cur.typed, name: evil } } });
    const p = (await postPlan(a, { ...planRequest, name: `plan ${evil}`, uncertainty: undefined })).json();
    const html = (await a.inject({ method: 'GET', url: `/api/plans/${p.id}/sheet?format=html&buffer=${encodeURIComponent('<b>PBS</b>')}` })).body;
    expect(html).not.toContain('<img');
    expect(html).not.toContain('<b>PBS');
    expect(html).toContain('&lt;img src=x onerror=alert(1)&gt;');
    const md = (await a.inject({ method: 'GET', url: `/api/plans/${p.id}/sheet?format=md` })).body;
    expect(md).not.toContain('<img');
    expect(md).toContain('&lt;img src=x onerror=alert(1)&gt;');
    await a.close();
  });

  it('options: sample volume, replicates, minimum volume; errors for bad options and impossible plans', async () => {
    const s = await sheet('&sampleVolume=50%20uL&replicates=2&minVolume=2%20uL');
    expect(s.options).toMatchObject({ sampleVolume: { value: 50, unit: 'µL' }, replicates: 2, minVolume: { value: 2, unit: 'µL' } });
    expect(Math.min(...s.samples.flatMap((x) => x.steps.map((st) => st.volume.value)))).toBeGreaterThanOrEqual(2);
    const bad = await app.inject({ method: 'GET', url: `/api/plans/${planId}/sheet?sampleVolume=3%20mM` });
    expect(bad.statusCode).toBe(400);
    expect(bad.json().problems[0].path).toBe('sampleVolume');
    const impossible = await app.inject({ method: 'POST', url: `/api/plans/${planId}/sheet?format=json`, payload: { stocks: { 'ptj-1um-b07': { massConcentration: '0.05 mg/mL' } } } });
    expect(impossible.statusCode).toBe(422);
    // 200 × more dilute than the shelf's stock: more dilute than the top doses, so only a stronger stock fixes it
    expect(impossible.json().message).toMatch(/No sample volume helps.*Use a Pt Janus 1 um, batch TS-PtJ-1\.0-B07 stock of at least/);
    const cannot = await app.inject({ method: 'GET', url: `/api/plans/${planId}/sheet?format=json&candidate=catb-0.22-l04` });
    expect(cannot.statusCode).toBe(422);
    expect(cannot.json()).toMatchObject({ error: 'domain', code: 'candidate-infeasible', fits: false });
    // through the page link (HTML, the default): an explanation page, still 422 (changed on purpose in issue 10)
    const page = await app.inject({ method: 'GET', url: `/api/plans/${planId}/sheet?candidate=catb-0.22-l04` });
    expect(page.statusCode).toBe(422);
    expect(page.headers['content-type']).toMatch(/^text\/html/);
    expect(page.body).toContain('Why there is no sheet');
  });
});

describe('bench sheet stocks', () => {
  it('a stock given for an id the sheet does not pipette is reported as unused, not silently dropped', async () => {
    const r = await app.inject({ method: 'POST', url: `/api/plans/${planId}/sheet?format=json`, payload: { stocks: { glucose: { molarConcentration: '1 M' } } } });
    expect(r.statusCode).toBe(200);
    expect((r.json() as Sheet).warnings.filter((w) => w.code === 'unused-stock').map((w) => w.message)).toEqual([
      'the stock given for "glucose" is not used: it is not a species of the plan nor a chemical pipetted on this sheet.',
    ]);
    expect((await sheet()).warnings.some((w) => w.code === 'unused-stock')).toBe(false);
  });

  it('the imaging plan gives the first gas to pass its solubility at the margin dose, from the analysis there', async () => {
    const s = await sheet();
    // the demo Pt Janus beads make O₂ (constant activities): the sheet restates the margin analysis' gas check
    const g = s.imaging.gasSaturation!;
    expect(g.chemical).toBe('o2');
    expect(g.productionRate.unit).toBe('mM/s');
    expect(g.solubility).toEqual({ value: 1.3, unit: 'mM' });
    // (1.3 − 0) mM / production: the time follows from the two numbers shown, to their 4 and 3 figures
    expect(Math.abs(g.time.value - 1.3 / g.productionRate.value) / g.time.value).toBeLessThan(2e-3);
    expect(s.imaging.notes.some((n) => /passes its solubility \(1\.3 mM\)/.test(n))).toBe(true);
  });
});

describe('hazard editor', () => {
  it('reads and versions hazard data, refusing a stale write', async () => {
    const cur = (await app.inject({ method: 'GET', url: '/api/chemicals/h2o2/hazards' })).json();
    expect(cur.current.version).toBe(1);
    const body = { ...cur.current.body, storage: 'cold room, vented cap' };
    const w = await app.inject({ method: 'PUT', url: '/api/chemicals/h2o2/hazards', payload: { baseVersion: 1, hazards: body, author: 'safety officer (invented)' } });
    expect(w.statusCode).toBe(200);
    expect(w.json().version).toBe(2);
    const stale = await app.inject({ method: 'PUT', url: '/api/chemicals/h2o2/hazards', payload: { baseVersion: 1, hazards: body } });
    expect(stale.statusCode).toBe(409);
    expect(stale.json().error).toBe('stale-version');
    const bad = await app.inject({ method: 'PUT', url: '/api/chemicals/h2o2/hazards', payload: { baseVersion: 2, hazards: { ...body, bands: [{ ...body.bands[0], pictograms: ['GHS10'] }] } } });
    expect(bad.statusCode).toBe(400);
    expect(bad.json().problems[0].path).toBe('hazards.bands[0].pictograms[0]');
    expect((await app.inject({ method: 'GET', url: '/api/chemicals/h2o2/hazards' })).json().history.map((h: { version: number }) => h.version)).toEqual([1, 2]);
    expect((await app.inject({ method: 'PUT', url: '/api/chemicals/ghost/hazards', payload: { baseVersion: 0, hazards: body } })).statusCode).toBe(404);
  });
});

describe('brink sheet', () => {
  it('prints the sheet of a plan from the database', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'brink-sheet-'));
    const path = join(dir, 'b.sqlite');
    const db = openDatabase(path);
    seedDemoShelf(db);
    const a = await buildApp({ config: { closeDatabase: true }, db });
    const p = (await postPlan(a, { ...planRequest, uncertainty: undefined })).json();
    await a.close();
    let out = '';
    let err = '';
    const io = { out: (t: string) => (out += t), err: (t: string) => (err += t) };
    expect(await main(['sheet', String(p.id), '--db', path, '--format', 'md'], io)).toBe(0);
    expect(out).toContain(`plan ${p.id}`);
    expect(out).toContain('## Hazards and safe handling');
    const file = join(dir, 'sheet.html');
    expect(await main(['sheet', String(p.id), '--db', path, '--out', file], io)).toBe(0);
    expect(await main(['sheet', '999', '--db', path], io)).toBe(2);
    expect(err).toMatch(/no plan 999/);
  });
});

describe('the planner\'s warnings reach the sheet', () => {
  it('an earlier instability than the chosen boundary, and a band quantile above the cap, are said in every rendering', async () => {
    const req = { ...planRequest, candidates: ['ptj-swim-0.5-s02', 'catalase-e3'], uncertainty: { samples: 20, seed: 5 } };
    const id = (await postPlan(app, req)).json().id;
    const get = async (candidate: string, format: string) => (await app.inject({ method: 'GET', url: `/api/plans/${id}/sheet?format=${format}&candidate=${candidate}` })).body;
    // the swimmer turns oscillatory below its stationary threshold (checked by hand in tests/cli/screen.test.ts)
    const swim = JSON.parse(await get('ptj-swim-0.5-s02', 'json')) as Sheet;
    const w = swim.warnings.find((x) => x.code === 'earlier-instability');
    expect(w?.message).toMatch(/oscillatory/);
    expect(swim.warnings[0]!.code).toBe('earlier-instability');
    for (const format of ['html', 'md']) expect(await get('ptj-swim-0.5-s02', format)).toContain('oscillatory from');
    // catalase's 95 % point lies above the dose cap: printed as such, not as a dash
    const cat = JSON.parse(await get('catalase-e3', 'json')) as Sheet;
    expect(cat.prediction.band!.p95).toBeNull();
    expect(cat.prediction.band!.alreadyPast).toBe(0);
    for (const format of ['html', 'md']) expect(await get('catalase-e3', format)).toContain('above the dose cap');
  });
});

describe('the plan\'s own warnings reach the sheet', () => {
  it('a chemical the plan took as 0 that only another candidate uses (glucose, the substrate of gox-e1) is not on this candidate’s sheet', async () => {
    const req = { ...planRequest, candidates: ['ptj-1um-b07', 'gox-e1'], uncertainty: undefined };
    const plan = (await postPlan(app, req)).json();
    const planWarning = plan.result.warnings.find((w: { code: string; message: string }) => w.code === 'no-concentration' && /glucose/.test(w.message));
    expect(planWarning).toBeDefined();
    // neither the B09 base nor B07 couples to glucose (demo shelf): the bench of B07 has nothing to do with it
    const s = (await app.inject({ method: 'GET', url: `/api/plans/${plan.id}/sheet?format=json&candidate=ptj-1um-b07` })).json() as Sheet;
    expect(s.warnings.filter((w) => /glucose/.test(w.message))).toEqual([]);
    const keys = s.warnings.map((w) => `${w.code}|${w.message}`);
    expect(new Set(keys).size).toBe(keys.length);
  });
});
