/// <reference lib="dom" />
/**
 * The Plan page (/plans/:id) in Debian's Chromium (playwright-core), on the demo shelf at 127.0.0.1:
 * a plan with a Monte Carlo band, a state map and a fuel sweep is made through the API; the page shows
 * the request in words, the ranked table with a dose-path strip per candidate and the infeasible ones
 * with their reasons; a candidate chosen by keyboard shows its growth rate against wavenumber (axes
 * labelled with units, the allowed modes and the fastest one), its mode composition, the threshold's
 * distribution, the fuel sweep and the state map; renaming works and a stale rename says so (409);
 * a rerun after a shelf edit lists the differences and links the new plan. No console or page
 * errors. Screenshots: screenshots/plan-*.png.
 */
import { mkdirSync } from 'node:fs';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { fmtAmountOf } from '../../server/units/display.js';
import { startBrowserApp } from '../helpers/browser.js';
import { planRequest, postPlan } from '../helpers/plans.js';

let app: App;
let browser: Browser;
let base: string;
let planId: number;
let page: Page;
const problems: string[] = [];
const shots = 'screenshots';

beforeAll(async () => {
  ({ app, browser, base } = await startBrowserApp());
  mkdirSync(shots, { recursive: true });
  const r = await postPlan(app, {
    ...planRequest,
    name: 'washed B09 with three dopants',
    candidates: ['ptj-1um-b07', 'catb-0.22-l04', 'ptj-swim-0.5-s02', 'silica-1um-t01'],
    stateMap: { candidate: 'ptj-1um-b07', baseSteps: 12, doseSteps: 16 },
    fuelSweep: { chemical: 'h2o2', range: ['50 mM', '400 mM'], steps: 5 },
  });
  expect(r.statusCode).toBe(201);
  planId = r.json().id;
  page = await browser.newPage({ viewport: { width: 1280, height: 800 } });
  // a failed request is judged by its response below (the console's own line names no URL); the one refusal
  // expected is the stale rename's 409
  page.on('console', (m) => {
    if (m.type() === 'error' && !m.text().startsWith('Failed to load resource')) problems.push(`console: ${m.text()}`);
  });
  page.on('response', (r) => {
    if (r.status() >= 400 && !(r.status() === 409 && r.request().method() === 'PATCH')) problems.push(`HTTP ${r.status()}: ${r.request().method()} ${r.url()}`);
  });
  page.on('pageerror', (e) => problems.push(`page error: ${e.message}`));
  // content-security-policy violations (no inline style or script), added through the debugging protocol
  await page.addInitScript(() => {
    document.addEventListener('securitypolicyviolation', (e) => console.error(`CSP: ${e.violatedDirective} blocked ${e.blockedURI || '(inline)'}`));
  });
}, 120_000);

afterAll(async () => {
  await browser?.close();
  await app?.close();
});

describe('the Plan page', () => {
  it('shows the request in words, the ranked table with a strip per candidate and the infeasible ones with reasons', async () => {
    await page.goto(`${base}/plans/${planId}`);
    await page.waitForSelector('table.ranked tbody tr');
    const plan = (await app.inject({ method: 'GET', url: `/api/plans/${planId}` })).json();
    const feasible = plan.result.candidates.filter((c: { feasible: boolean }) => c.feasible);
    const infeasible = plan.result.candidates.filter((c: { feasible: boolean }) => !c.feasible);
    expect(feasible.length).toBeGreaterThanOrEqual(1);
    expect(infeasible.length).toBeGreaterThanOrEqual(1);
    expect(await page.textContent('h1')).toBe('washed B09 with three dopants');
    const asked = await page.textContent('section.asked');
    expect(asked).toContain('volume fraction 0.1 %');
    expect(asked).toContain('200 mM');
    expect(asked).toMatch(/o2: no level given — taken as 0/);
    expect(asked).toContain('sealed walls');
    expect(asked).toContain('2 mm across');
    expect(asked).toContain('40 Monte Carlo draws');
    expect(asked).toMatch(/cluster or demix/);
    // the table: one row per feasible candidate, in rank order, each with a strip (an SVG labelled with its states)
    const rows = page.locator('table.ranked tbody tr');
    expect(await rows.count()).toBe(feasible.length);
    const order = await rows.evaluateAll((trs) => trs.map((tr) => (tr as HTMLElement).dataset.species));
    expect(order).toEqual(feasible.map((c: { species: string }) => c.species));
    expect(await page.locator('table.ranked figure.strip svg').count()).toBe(feasible.length);
    const strip = await page.locator('table.ranked figure.strip svg').first().getAttribute('aria-label');
    expect(strip).toMatch(/stable from 0 to .*stationary from/);
    // the first row: the dose in particles/mL with its mass (radius 1 µm, 2 g/mL on the demo shelf)
    const first = feasible[0];
    const doseCell = await rows.first().locator('td').nth(2).textContent();
    expect(doseCell).toMatch(/particles\/mL \(.*µg\/mL\)/);
    const stored = plan.inputs.candidates.find((c: { id: string }) => c.id === first.species);
    const shelf = (await app.inject({ method: 'GET', url: `/api/species/${first.species}` })).json();
    expect(doseCell).toContain(fmtAmountOf(first.threshold.density, { kind: shelf.record.kind, radius: stored.radius, materialDensity: stored.materialDensity }));
    expect(await rows.first().locator('td').nth(3).textContent()).toMatch(/median .*5–95 % of 40 draws/);
    expect(await rows.first().locator('a', { hasText: 'bench sheet' }).getAttribute('href')).toBe(`/plans/${planId}/sheet?candidate=${encodeURIComponent(first.species)}`);
    expect(await rows.first().locator('a', { hasText: 'What forms past onset' }).getAttribute('href')).toBe(`/plans/${planId}/forms?candidate=${encodeURIComponent(first.species)}`);
    const inf = await page.textContent('ul.infeasible');
    for (const c of infeasible) expect(inf).toContain(c.message);
    expect(await page.textContent('main')).toContain('supplier’s safety data sheet');
    await page.screenshot({ path: `${shots}/plan-top.png`, fullPage: false });
    await page.locator('section:has(#ranked-h)').screenshot({ path: `${shots}/plan-ranked.png` });
  }, 60_000);

  it('a candidate chosen by keyboard shows its growth rate against wavenumber with units, the composition, the band, the fuel sweep and the state map', async () => {
    const pick = page.locator('table.ranked button.pick[data-species="ptj-1um-b07"]');
    await pick.focus();
    await page.keyboard.press('Enter');
    expect(await pick.getAttribute('aria-pressed')).toBe('true');
    await page.waitForSelector('#detail figure svg[aria-label^="Growth rate"]');
    const disp = page.locator('#detail figure', { has: page.locator('svg[aria-label^="Growth rate"]') });
    const text = await disp.textContent();
    expect(text).toContain('wavenumber k (1/mm)');
    expect(text).toMatch(/growth rate Re λ \(1\/(h|s)\)/);
    expect(text).toContain('k = nπ/L (sealed walls)');
    expect(text).toContain('fastest: mode 1');
    // one dot per allowed mode (and the ring of the fastest)
    expect(await disp.locator('svg g[aria-label="dot"] circle').count()).toBeGreaterThanOrEqual(5 + 1);
    expect(await page.textContent('#detail')).toMatch(/The fastest mode \(n = 1\) grows at .* per hour/);
    // composition in words, the band's distribution (21 quantiles), the fuel sweep and the state map
    const detail = (await page.textContent('#detail'))!;
    expect(detail).toMatch(/ptj-1um-b07 gathers together; ptj-1um-b09 is pushed out/);
    expect(detail).toContain('21 quantiles');
    expect(detail).toContain('share of draws crossed (cumulative)');
    expect(detail).toContain('h2o2 (mM)');
    const map = page.locator('#detail figure', { has: page.locator('svg[aria-label^="State of the mixture"]') });
    const mapText = await map.textContent();
    expect(mapText).toContain('dose (particles/mL)');
    expect(mapText).toContain('base level (× planned, all base species)');
    expect(await map.locator('svg rect').count()).toBeGreaterThanOrEqual(12 * 16);
    const legend = (await page.locator('#detail .legend li').allTextContents()).join(' | ');
    for (const t of ['stable (stays mixed)', 'stationary (clusters or demixes)', 'boundary between states', 'threshold dose', 'planned dose series']) expect(legend).toContain(t);
    await page.locator('#detail').screenshot({ path: `${shots}/plan-detail.png` });
    // a dose typed below the threshold: nothing grows
    const plan = (await app.inject({ method: 'GET', url: `/api/plans/${planId}` })).json();
    const x = plan.result.candidates.find((c: { species: string }) => c.species === 'ptj-1um-b07').threshold.density;
    await page.fill('#detail .field.quantity input', `${(x * 0.3 * 1e-6).toExponential(3)} 1/mL`);
    await page.waitForSelector('#detail output.si.ok');
    await page.click('#detail button:has-text("Draw")');
    await page.waitForFunction(() => document.querySelector('#detail')?.textContent?.includes('No allowed mode grows at this dose'));
  }, 60_000);

  it('renames the plan, and a rename on a stale revision says who changed it first (409)', async () => {
    await page.click('#rename');
    await page.fill('form.edit input[type=text] >> nth=0', 'washed B09: three dopants compared');
    await page.click('form.edit button[type=submit]');
    await page.waitForFunction(() => document.querySelector('h1')?.textContent === 'washed B09: three dopants compared');
    // someone else renames it while the form is open
    await page.click('#rename');
    const cur = (await app.inject({ method: 'GET', url: `/api/plans/${planId}` })).json();
    const other = await app.inject({ method: 'PATCH', url: `/api/plans/${planId}`, payload: { baseRevision: cur.revision, notes: 'changed by a colleague', author: 'a colleague (invented)' } });
    expect(other.statusCode).toBe(200);
    await page.fill('form.edit input[type=text] >> nth=0', 'my name for it');
    await page.click('form.edit button[type=submit]');
    await page.waitForSelector('form.edit .msg.error');
    expect(await page.textContent('form.edit .msg.error')).toMatch(/Someone else changed the name or notes first.*changed by a colleague/s);
    // saving again goes on top of their revision
    await page.click('form.edit button[type=submit]');
    await page.waitForFunction(() => document.querySelector('h1')?.textContent === 'my name for it');
  }, 60_000);

  it('reruns against today’s shelf after a shelf edit and lists the differences with a link to the new plan', async () => {
    const sp = (await app.inject({ method: 'GET', url: '/api/species/ptj-1um-b07' })).json();
    const edited = await app.inject({ method: 'PUT', url: '/api/species/ptj-1um-b07', payload: { baseRevision: sp.revision, record: { ...sp.typed, couplings: sp.typed.couplings.map((c: { chemical: string }, i: number) => (i === 0 ? { ...c, mobility: { value: '80 um^2/(s*mM)', sd: '10 um^2/(s*mM)' } } : c)) }, note: 'a stronger response measured (invented)' } });
    expect(edited.statusCode).toBe(200);
    await page.click('#rerun');
    await page.waitForSelector('.diff table.diff-table', { timeout: 60_000 });
    const diff = (await page.textContent('.diff'))!;
    expect(diff).toMatch(/species ptj-1um-b07: revision 1 → revision 2/);
    const row = page.locator('.diff-table tr', { hasText: 'ptj-1um-b07' });
    expect(await row.getAttribute('class')).toBe('changed');
    // a stronger attraction lowers the threshold: the new dose is smaller (× below 1)
    const ratio = Number(/^× ([0-9.]+)$/.exec((await row.locator('.ratio').textContent())!)?.[1]);
    expect(ratio).toBeLessThan(1);
    expect(ratio).toBeGreaterThan(0.2);
    const link = await page.locator('.diff a.button').getAttribute('href');
    expect(link).toMatch(/^\/plans\/\d+$/);
    expect(link).not.toBe(`/plans/${planId}`);
    await page.locator('section:has(#rerun-h)').screenshot({ path: `${shots}/plan-rerun.png` });
    await page.goto(`${base}${link}`);
    await page.waitForSelector('table.ranked tbody tr');
    expect(await page.textContent('.plan-head')).toMatch(new RegExp(`a rerun of plan ${planId}`));
    await page.screenshot({ path: `${shots}/plan-full.png`, fullPage: true });
    expect(problems).toEqual([]);
  }, 90_000);

  it('a plan stored before bands kept their distribution shows the three quantiles and says so', async () => {
    const p = await browser.newPage({ viewport: { width: 1280, height: 800 } });
    const errs: string[] = [];
    p.on('pageerror', (e) => errs.push(e.message));
    // the plan as an older service stored it: no band.quantiles
    await p.route(`**/api/plans/${planId}`, async (route) => {
      const r = await route.fetch();
      const body = await r.json();
      for (const c of body.result.candidates) if (c.band) delete c.band.quantiles;
      await route.fulfill({ response: r, json: body });
    });
    await p.goto(`${base}/plans/${planId}`);
    await p.waitForSelector('#detail svg[aria-label^="Share of the 40 Monte Carlo draws"]');
    const text = (await p.textContent('#detail'))!;
    expect(text).toContain('three quantiles');
    expect(text).toContain('only the 5 %, 50 % and 95 % points are known');
    expect(await p.locator('#detail figure', { has: p.locator('svg[aria-label^="Share of the 40"]') }).locator('svg g[aria-label="dot"] circle').count()).toBe(3);
    expect(errs).toEqual([]);
    await p.close();
  }, 30_000);

  it('a plan where no candidate crosses explains what to do, lists the reasons, and draws a typed dose on request', async () => {
    const r = await postPlan(app, { ...planRequest, name: 'only a self-repelling bead', candidates: ['catb-0.22-l04'], uncertainty: { samples: 10, seed: 2 } });
    expect(r.statusCode).toBe(201);
    const p = await browser.newPage({ viewport: { width: 1280, height: 800 } });
    const errs: string[] = [];
    p.on('pageerror', (e) => errs.push(e.message));
    await p.goto(`${base}/plans/${r.json().id}`);
    await p.waitForSelector('ul.infeasible');
    expect(await p.textContent('section:has(#ranked-h) .empty')).toMatch(/No candidate crosses the stationary boundary below its dose cap/);
    expect(await p.textContent('ul.infeasible')).toContain('self-repelling');
    const detail = (await p.textContent('#detail'))!;
    expect(detail).toContain('does not cross below its cap: type a dose');
    expect(detail).toContain('No draw has a threshold between 0 and the cap');
    await p.fill('#detail .field.quantity input', '1e7 1/mL');
    await p.waitForSelector('#detail output.si.ok');
    await p.click('#detail button:has-text("Draw")');
    await p.waitForFunction(() => document.querySelector('#detail')?.textContent?.includes('No allowed mode grows at this dose'));
    expect(errs).toEqual([]);
    await p.close();
  }, 60_000);

  it('an unknown plan says so in words', async () => {
    const p = await browser.newPage();
    const errs: string[] = [];
    p.on('pageerror', (e) => errs.push(e.message));
    await p.goto(`${base}/plans/99999`);
    await p.waitForSelector('.empty');
    expect(await p.textContent('.empty')).toContain('There is no plan 99999');
    expect(errs).toEqual([]);
    await p.close();
  }, 30_000);
});
