/// <reference lib="dom" />
/**
 * The whole job in a browser, as a researcher would do it on the demo shelf (Debian's Chromium
 * driven by playwright-core; the service on 127.0.0.1 only): add a species with units and an
 * uncertainty, calibrate it from a CSV and apply the fit, compose a two-species base (washed Janus colloids with an inert tracer) and run a plan
 * with its progress to completion, cancel another, open the state map and the dispersion plot, open
 * the bench sheet and print it to PDF (the pipetting table and the hazard section in its text), enter
 * what each tube did and apply the update. Every page is screenshotted into screenshots/ (git-ignored)
 * for review, and no page may log a console error, throw, or break the content security policy.
 *
 * The numbers are not checked here against the outside world (each page's own test and the engine's
 * reference tests do that): this test checks that the pages carry the job end to end, and that what
 * they stored is what the service computes.
 */
import { mkdirSync, readFileSync } from 'node:fs';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { startBrowserApp } from '../helpers/browser.js';
import { pdfText } from '../helpers/pdf-text.js';

const root = new URL('../../', import.meta.url).pathname;
const SHOTS = `${root}screenshots`;
// invented demo data: an MSD curve of the demo silica tracer (seeds/README.md)
const msdCsv = readFileSync(`${root}seeds/calibration/silica-1um-t01-msd.csv`, 'utf8');

let app: App;
let browser: Browser;
let base = '';
let page: Page;
const problems: string[] = [];
let shot = 0;

/** A screenshot of the page as it is now, numbered in the order of the walk. */
async function snap(name: string): Promise<void> {
  shot += 1;
  await page.screenshot({ path: `${SHOTS}/walkthrough-${String(shot).padStart(2, '0')}-${name}.png`, fullPage: true });
}

beforeAll(async () => {
  mkdirSync(SHOTS, { recursive: true });
  ({ app, browser, base } = await startBrowserApp());
  page = await browser.newPage({ viewport: { width: 1280, height: 800 } });
  page.on('console', (m) => {
    if (m.type() === 'error') problems.push(`console: ${m.text()}`);
  });
  page.on('pageerror', (e) => problems.push(`page error: ${e.message}`));
  page.on('response', (r) => {
    if (r.status() >= 400) problems.push(`HTTP ${r.status()}: ${r.request().method()} ${new URL(r.url()).pathname}`);
  });
  // added through the browser's debugging protocol, so the policy does not apply to this script
  await page.exposeFunction('__csp', (text: string) => problems.push(text));
  await page.addInitScript(() => {
    document.addEventListener('securitypolicyviolation', (e) => (window as unknown as { __csp(t: string): void }).__csp(`CSP: ${e.violatedDirective} blocked ${e.blockedURI || '(inline)'}`));
  });
}, 60_000);

afterAll(async () => {
  await browser?.close();
  await app?.close();
});

const api = async (url: string) => (await app.inject({ method: 'GET', url })).json();

describe('the whole job in the browser, on the demo shelf', () => {
  it('1. the shelf lists the demo species; a new species is added with units and an uncertainty', async () => {
    await page.goto(`${base}/`);
    await page.waitForSelector('#species tbody tr');
    expect(await page.textContent('#species')).toContain('ptj-1um-b07');
    expect(await page.textContent('#species')).toMatch(/µm²\/s/);
    await snap('shelf');

    await page.click('#new-species');
    await page.waitForSelector('#item-form');
    await page.fill('input[name="id"]', 'tarn-tracer-9');
    await page.fill('input[name="name"]', 'Silica tracer 1 um, batch TS-Si-1.0-T09 (invented)');
    await page.fill('input[name="diffusivity"]', '0.3 um^2/s');
    await page.getByLabel('Diffusivity: standard uncertainty').fill('0.03 um^2/s');
    await page.fill('input[name="radius"]', '1 um');
    // the service reads the value as it is typed and shows it in bench units
    await page.locator('.coef[data-key="diffusivity"] output.si.ok').waitFor();
    expect(await page.textContent('.coef[data-key="diffusivity"] output.si')).toMatch(/0\.3 ± 0\.03 µm²\/s/);
    await snap('item-new');
    await page.click('#save');
    await page.waitForURL(/\/shelf\/species\/tarn-tracer-9$/);
    await page.waitForSelector('#history li');
    const sp = await api('/api/species/tarn-tracer-9');
    expect(sp.revision).toBe(1);
    // 0.3 µm²/s = 3e-13 m²/s (SI prefixes, BIPM SI Brochure)
    expect(sp.record.diffusivity.si).toBeCloseTo(3e-13, 25);
    expect(sp.record.diffusivity.sd).toBeCloseTo(3e-14, 26);
    await snap('item-saved');
  }, 90_000);

  it('2. the new species is calibrated from a CSV and the fit applied to the shelf', async () => {
    await page.goto(`${base}/calibrate?species=tarn-tracer-9`);
    await page.waitForFunction(() => (document.getElementById('species') as HTMLSelectElement | null)?.value === 'tarn-tracer-9');
    await page.fill('#data', msdCsv);
    await page.click('#run');
    await page.waitForSelector('#parameters');
    const svg = await page.$$eval('figure svg', (s) => s.map((x) => x.textContent ?? ''));
    expect(svg[0]).toContain('lag time (s)');
    await snap('calibrate-fit');
    await page.click('#store');
    await page.waitForSelector('#stored');
    await page.check('#accept-understated'); // the MSD fit says its own ± is too small
    await page.click('#apply-button');
    await page.waitForSelector('#applied');
    await snap('calibrate-applied');
    const id = Number(/measurement (\d+)/.exec((await page.textContent('#stored'))!)![1]);
    const m = await api(`/api/measurements/${id}`);
    // what was stored is what was fitted, and the shelf now carries it
    expect(m.data).toBe(msdCsv);
    const sp = await api('/api/species/tarn-tracer-9');
    expect(sp.revision).toBe(2);
    expect(Math.abs(sp.record.diffusivity.si - m.fit.parameters.diffusivity.value)).toBeLessThanOrEqual(m.fit.parameters.diffusivity.sd);
  }, 90_000);

  let planId = 0;
  it('3. a two-species base is composed and a plan runs with its progress to completion', async () => {
    await page.goto(`${base}/planner`);
    await page.getByRole('heading', { name: 'Planner' }).waitFor();
    await page.getByRole('group', { name: /chemical level: h2o2/ }).getByText('= 200 mM').waitFor();
    await page.getByRole('button', { name: '+ Add a species to the base' }).click();
    const row2 = page.getByRole('group', { name: /base species 2/ });
    await row2.getByLabel('species').selectOption('silica-1um-t01');
    await row2.getByLabel('amount (volume fraction)', { exact: true }).fill('0.05 %');
    await row2.getByText('= 0.05 %').waitFor();
    // ticking candidates chooses them (the pool leaves out the base)
    const pool = page.getByRole('group', { name: 'candidate species' });
    await pool.getByLabel(/ptj-1um-b07/).check();
    await pool.getByLabel(/tarn-tracer-9/).check();
    expect(await page.getByRole('radio', { name: /^chosen/ }).isChecked()).toBe(true);
    await page.getByLabel('draws', { exact: true }).fill('40');
    await page.getByText('State map, fuel sweep (optional)').click();
    await page.getByLabel('Draw a state map').check();
    await snap('planner-form');
    await page.getByRole('button', { name: 'Run the plan' }).click();
    await page.getByRole('progressbar', { name: 'Computing the plan: progress' }).waitFor();
    await snap('planner-progress');
    await page.waitForURL(/\/plans\/\d+$/, { timeout: 120_000 });
    planId = Number(/\/plans\/(\d+)$/.exec(page.url())![1]);
    const plan = await api(`/api/plans/${planId}`);
    expect(plan.request.base).toEqual([
      { id: 'ptj-1um-b09', volumeFraction: '0.1 %' },
      { id: 'silica-1um-t01', volumeFraction: '0.05 %' },
    ]);
    expect(plan.request.candidates).toEqual(['ptj-1um-b07', 'tarn-tracer-9']);
  }, 150_000);

  it('4. another plan is started and cancelled: nothing is stored', async () => {
    const before = (await api('/api/plans')).total;
    await page.goto(`${base}/planner`);
    await page.getByRole('group', { name: /chemical level: h2o2/ }).getByText('= 200 mM').waitFor();
    await page.getByLabel('draws', { exact: true }).fill('1500'); // every candidate × 1,501 draws: minutes of work
    await page.getByRole('button', { name: 'Run the plan' }).click();
    await page.waitForFunction(() => /candidate \d of \d/.test(document.querySelector('.job .stage')?.textContent ?? ''), null, { timeout: 60_000 });
    await page.getByRole('button', { name: 'Cancel' }).click();
    await page.getByText('The plan was cancelled: nothing was stored.').waitFor({ timeout: 30_000 });
    await snap('planner-cancelled');
    expect((await api('/api/plans')).total).toBe(before);
  }, 120_000);

  it('5. the plan page: the ranked table, the dispersion plot and the state map of the chosen candidate', async () => {
    await page.goto(`${base}/plans/${planId}`);
    await page.waitForSelector('table.ranked tbody tr');
    await snap('plan');
    const pick = page.locator('table.ranked button.pick[data-species="ptj-1um-b07"]');
    await pick.click();
    await page.waitForSelector('#detail figure svg[aria-label^="Growth rate"]');
    const detail = (await page.textContent('#detail'))!;
    expect(detail).toContain('wavenumber k (1/mm)');
    expect(detail).toMatch(/growth rate Re λ \(1\/(h|s|min)\)/);
    const map = page.locator('#detail figure', { has: page.locator('svg[aria-label^="State of the mixture"]') });
    expect(await map.textContent()).toContain('dose (particles/mL)');
    await snap('plan-detail');
  }, 90_000);

  it('6. the bench sheet opens with its options and prints to PDF with the pipetting table and the hazards', async () => {
    await page.goto(`${base}/plans/${planId}`);
    await page.waitForSelector('table.ranked tbody tr');
    await page.locator('table.ranked tbody tr[data-species="ptj-1um-b07"] a', { hasText: 'bench sheet' }).click();
    await page.waitForURL(/\/plans\/\d+\/sheet/);
    await page.waitForSelector('#sec-pipetting tr[data-tube]');
    await snap('sheet');
    await page.emulateMedia({ media: 'print' });
    const text = await pdfText(await page.pdf({ preferCSSPageSize: true, printBackground: true }));
    await page.emulateMedia({ media: 'screen' });
    expect(text).toMatch(/Pipetting/);
    expect(text).toMatch(/D8/);
    expect(text).toMatch(/Hazards and safe handling/);
    expect(text).toMatch(/H318/);
  }, 90_000);

  it('7. what each tube did is entered; the update runs and is applied to the shelf', async () => {
    // from the sheet, so the tube codes are those of the sheet just printed
    await page.click('#to-outcomes');
    await page.waitForURL(/\/plans\/\d+\/outcomes/);
    await page.waitForSelector('#tubes tbody tr');
    const lids = await page.$$eval('#tubes select[name^="state-"]', (ss) => ss.map((s) => (s as HTMLSelectElement).name.slice('state-'.length)));
    expect(lids.length).toBeGreaterThan(6);
    // a plausible bench result: the controls and the lower doses stay mixed, the four highest doses cluster
    for (const lid of lids) await page.selectOption(`select[name="state-${lid}"]`, /^D[5-8]/.test(lid) ? 'stationary' : 'stable');
    await page.fill('input[name="author"]', 'a technician (invented)');
    await snap('outcomes-entry');
    await page.click('#save');
    await page.waitForSelector('#saved');
    await page.waitForSelector('#dose-response figure svg');
    const before = await api('/api/species/ptj-1um-b07');
    await page.click('#run-update');
    await page.waitForSelector('#consistency', { timeout: 150_000 });
    await snap('outcomes-update');
    await page.click('#apply');
    await page.waitForSelector('#applied');
    await snap('outcomes-applied');
    const after = await api('/api/species/ptj-1um-b07');
    expect(after.revision).toBe(before.revision + 1);
  }, 240_000);

  it('no page logged a console error, threw, or broke the content security policy', () => {
    // Chromium logs a failed request as a console error with no URL; the responses are listed themselves
    const seen = problems.filter((p) => !/^console: Failed to load resource/.test(p));
    expect(seen).toEqual([]);
  });
});
