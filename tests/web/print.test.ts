/// <reference lib="dom" />
/**
 * In a real browser (Debian's Chromium, driven by playwright-core): the shelf
 * page lists the demo shelf, a plan's bench sheet opens and prints to PDF with
 * its hazard section, and the pipetting part of the demo plan's default sheet
 * (tests/helpers/plans.ts planRequest) prints on one A4 page. The service
 * listens on 127.0.0.1 only.
 */
import { writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { startBrowserApp } from '../helpers/browser.js';
import { planRequest, postPlan } from '../helpers/plans.js';

/** Pages of a PDF: its page objects (/Type /Page, not /Pages). */
const pdfPages = (pdf: Buffer) => (pdf.toString('latin1').match(/\/Type\s*\/Page[^s]/g) ?? []).length;

let app: App;
let browser: Browser;
let base = '';

beforeAll(async () => {
  ({ app, browser, base } = await startBrowserApp());
}, 60_000);

afterAll(async () => {
  await browser?.close();
  await app?.close();
});

describe('in the browser', () => {
  it('the shelf page lists the demo species', async () => {
    const page = await browser.newPage();
    await page.goto(`${base}/`);
    await page.waitForSelector('#species tbody tr');
    const ids = await page.$$eval('#species tbody tr td:first-child', (tds) => tds.map((td) => td.textContent));
    expect(ids).toContain('ptj-1um-b07');
    expect(ids.length).toBe(8);
    await page.fill('#q', 'janus');
    await page.waitForFunction(() => document.querySelectorAll('#species tbody tr').length === 3);
    await page.close();
  }, 60_000);

  it("a plan's bench sheet opens and prints to PDF with its hazard section", async () => {
    const r = await postPlan(app, {
      base: [{ id: 'ptj-1um-b09', volumeFraction: '0.1 percent' }],
      chemicals: { h2o2: '200 mM' },
      chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' },
      boundary: 'stationary',
      candidates: ['ptj-1um-b07'],
      uncertainty: { samples: 20, seed: 1 },
    });
    expect(r.statusCode).toBe(201);
    const plan = r.json() as { id: number };
    const page = await browser.newPage();
    await page.goto(`${base}/api/plans/${plan.id}/sheet?format=html`);
    expect(await page.title()).toMatch(/^Bench sheet — plan /);
    const headings = await page.$$eval('h2', (hs) => hs.map((h) => h.textContent));
    expect(headings).toEqual(expect.arrayContaining(['Stocks', 'Pipetting', 'Imaging plan', 'Hazards and safe handling', 'Traceability']));
    expect(await page.isVisible('text=H318')).toBe(true);
    const pdf = await page.pdf({ format: 'A4', printBackground: true });
    expect(pdf.subarray(0, 5).toString()).toBe('%PDF-');
    expect(pdfPages(pdf)).toBeGreaterThanOrEqual(2);
    writeFileSync(join(tmpdir(), 'brink-sheet.pdf'), pdf);
    await page.close();
  }, 60_000);

  it('the pipetting part of the default sheet of the demo plan fits on one A4 page', async () => {
    // the default sheet: 9 doses (0, 0.5 … 2 × and the band's 5 % and 95 % doses) and the two other controls, 3 replicates each
    const r = await postPlan(app, planRequest);
    expect(r.statusCode).toBe(201);
    const page = await browser.newPage();
    await page.goto(`${base}/api/plans/${(r.json() as { id: number }).id}/sheet?format=html`);
    const rows = await page.$$eval('#sec-pipetting tr[data-tube]', (trs) => trs.map((tr) => tr.getAttribute('data-tube')));
    expect(rows).toEqual(['C0', 'D1', 'D2', 'D3', 'D4', 'D5', 'D6', 'D7', 'D8', 'CF', 'CA']);
    // the working solution step is part of it
    expect(await page.textContent('#sec-pipetting')).toMatch(/W1.*working solution/);
    // the whole sheet runs to several pages; print only the pipetting section (the page's own styles kept) and count
    const whole = pdfPages(await page.pdf({ format: 'A4' }));
    await page.evaluate(() => {
      for (const s of Array.from(document.querySelectorAll('section'))) if (s.id !== 'sec-pipetting') s.remove();
    });
    expect(await page.$$eval('section', (ss) => ss.map((s) => s.id))).toEqual(['sec-pipetting']);
    const pdf = await page.pdf({ format: 'A4' });
    writeFileSync(join(tmpdir(), 'brink-pipetting.pdf'), pdf);
    expect(whole).toBeGreaterThan(1);
    expect(pdfPages(pdf)).toBe(1);
    await page.close();
  }, 60_000);
});

describe('the Planner and Calibrate pages', () => {
  it('the Planner runs a screen over the demo shelf and links each feasible candidate to its bench sheet', async () => {
    const page = await browser.newPage();
    await page.goto(`${base}/planner`);
    await page.waitForSelector('#base option', { state: 'attached' });
    expect(await page.inputValue('#base')).toBe('ptj-1um-b09');
    await page.fill('#samples', '10');
    await page.click('#run');
    await page.waitForSelector('#results:not([hidden]) tbody tr');
    const rows = await page.$$eval('#results tbody tr', (trs) => trs.map((tr) => Array.from(tr.querySelectorAll('td')).map((td) => td.textContent ?? '')));
    expect(rows.length).toBe(7);
    // columns: rank, candidate, threshold, band, dose path, at 1.25 ×, why not / sheet, warnings
    expect(rows.find((r) => r[1] === 'silica-1um-t01')![6]).toMatch(/^no-coupling/);
    // only h2o2 is given: the oxidases' glucose is taken as 0, the plan says so in the status line, and they say why they cannot work
    expect(await page.textContent('#status')).toMatch(/plan \d+ stored — no concentration given for "glucose": taken as 0\./);
    for (const id of ['gox-e1', 'goxb-2um-k11']) expect(rows.find((r) => r[1] === id)![6]).toMatch(/^substrate-absent: its substrate glucose is absent/);
    // warnings give doses in the table's unit (per mL), never m⁻³
    const warned = rows.map((r) => r[7]!).filter((w) => /from \d/.test(w));
    expect(warned.length).toBeGreaterThan(0);
    for (const w of warned) {
      expect(w).toMatch(/per mL/);
      expect(w).not.toMatch(/m⁻³/);
    }
    // the first-ranked candidate is stable at small doses and its path names the state past its first boundary
    expect(rows[0]![4]).toMatch(/^stable → (stationary|oscillatory) from \d/);
    const href = await page.getAttribute('#results tbody tr:first-child a', 'href');
    expect(href).toMatch(/^\/api\/plans\/\d+\/sheet\?format=html&candidate=/);
    const sheet = await page.request.get(`${base}${href}`);
    expect(sheet.status()).toBe(200);
    expect(await sheet.text()).toContain('Hazards and safe handling');
    await page.close();
  }, 60_000);

  it('Calibrate fits pasted data, plots it, and stores it as a measurement', async () => {
    const page = await browser.newPage();
    await page.goto(`${base}/calibrate`);
    await page.waitForSelector('#species option', { state: 'attached' });
    await page.click('#run');
    await page.waitForSelector('#params:not([hidden]) tbody tr');
    const first = await page.$$eval('#params tbody tr:first-child td', (tds) => tds.map((td) => td.textContent));
    expect(first[0]).toBe('diffusivity');
    expect(first[3]).toBe('m^2/s');
    expect(await page.$$eval('#plot circle', (c) => c.length)).toBe(6);
    await page.click('#store');
    await page.waitForFunction(() => /stored as measurement \d+/.test(document.getElementById('status')?.textContent ?? ''));
    await page.fill('#data', 'lag [s],msd [um]\n1,2\n2,4\n');
    await page.click('#run');
    await page.waitForFunction(() => /needs a unit of length\^2/.test(document.getElementById('error')?.textContent ?? ''));
    await page.close();
  }, 60_000);
});

describe('the state map on the Planner page', () => {
  it('draws the cells, the boundary and the dose series of the top candidate', async () => {
    const page = await browser.newPage();
    await page.goto(`${base}/planner`);
    await page.waitForSelector('#base option', { state: 'attached' });
    await page.fill('#samples', '0');
    await page.check('#withMap');
    await page.click('#run');
    await page.waitForSelector('#mapFigure:not([hidden])');
    expect(await page.$$eval('#map rect', (r) => r.length)).toBe(14 * 18);
    expect(await page.$$eval('#map polyline', (p) => p.length)).toBeGreaterThanOrEqual(1);
    expect(await page.$$eval('#map circle', (c) => c.length)).toBeGreaterThanOrEqual(3);
    expect(await page.textContent('#mapCaption')).toMatch(/^State map for /);
    await page.screenshot({ path: join(tmpdir(), 'brink-planner-map.png'), fullPage: true });
    await page.close();
  }, 90_000);
});
