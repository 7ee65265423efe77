/// <reference lib="dom" />
/**
 * In a real browser (Debian's Chromium, driven by playwright-core): a plan's
 * bench sheet (the service's own print HTML) opens and prints to PDF with
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
