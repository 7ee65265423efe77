/// <reference lib="dom" />
/**
 * The Bench sheet page in a real browser (Debian's Chromium via playwright-core), on a plan created through
 * the API (tests/helpers/plans.ts): the sheet drawn from the service's JSON sections, its options as a form
 * (sample volume and replicates change the pipetting table as the service computes it for the same options),
 * the hazards section and the precedence statement on the page and in print, the PDF, and an impossible option
 * (a tiny sample volume) whose suggested fix is applied with its button. No console error on the way.
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { startBrowserApp } from '../helpers/browser.js';
import { pdfText } from '../helpers/pdf-text.js';
import { planRequest, postPlan } from '../helpers/plans.js';

let app: App;
let browser: Browser;
let base = '';
let planId = 0;

beforeAll(async () => {
  ({ app, browser, base } = await startBrowserApp());
  const r = await postPlan(app, planRequest);
  expect(r.statusCode).toBe(201);
  planId = (r.json() as { id: number }).id;
  mkdirSync('screenshots', { recursive: true });
}, 120_000);

afterAll(async () => {
  await browser?.close();
  await app?.close();
});

/** A page that records console errors and page errors. */
async function open(url: string): Promise<{ page: Page; errors: string[] }> {
  const page = await browser.newPage({ viewport: { width: 1280, height: 800 } });
  const errors: string[] = [];
  page.on('console', (m) => {
    if (m.type() === 'error') errors.push(m.text());
  });
  page.on('pageerror', (e) => errors.push(e.message));
  await page.goto(url);
  return { page, errors };
}

/** The cells of the pipetting table's tube rows, as the page shows them. */
const pipettingRows = (page: Page) => page.$$eval('#sec-pipetting tr[data-tube]', (trs) => trs.map((tr) => Array.from(tr.querySelectorAll('td'), (td) => td.textContent ?? '')));

/** The same rows from the service's JSON sheet for the same options (its sections are what the page draws). */
async function serviceRows(query: string): Promise<string[][]> {
  const r = await app.inject({ method: 'GET', url: `/api/plans/${planId}/sheet?format=json&${query}` });
  expect(r.statusCode).toBe(200);
  const sheet = r.json() as { sections: { id: string; blocks: { kind: string; rows?: { code?: string; cells: (string | null)[] }[] }[] }[] };
  const sec = sheet.sections.find((s) => s.id === 'pipetting')!;
  return sec.blocks.flatMap((b) => (b.kind === 'table' ? (b.rows ?? []).filter((x) => x.code !== undefined).map((x) => x.cells.map((c) => (c === null ? '☐' : c))) : []));
}

describe('the Bench sheet page', () => {
  it('draws the sheet, rebuilds it when sample volume and replicates change, links the other forms', async () => {
    const { page, errors } = await open(`${base}/plans/${planId}/sheet`);
    await page.waitForSelector('#sec-pipetting tr[data-tube]');
    const before = await pipettingRows(page);
    expect(before.map((r) => r[0]!.slice(0, 2))).toEqual(['C0', 'D1', 'D2', 'D3', 'D4', 'D5', 'D6', 'D7', 'D8', 'CF', 'CA']);
    expect(before).toEqual(await serviceRows(''));
    // safety: the precedence statement and the hazards section with its H-statements, and missing data said as missing
    await expect(page.isVisible('#glance .precedence')).resolves.toBe(true);
    expect(await page.textContent('#glance')).toMatch(/local regulations, your institution’s safety rules and the supplier’s safety data sheet take precedence/i);
    expect(await page.textContent('#sec-hazards')).toContain('H318');
    expect(await page.textContent('#sec-hazards')).toContain('no hazard data on the shelf: not classified');
    expect(await page.textContent('#glance')).toMatch(/no hazard data on the shelf .*not classified, which does not mean harmless/);
    expect(await page.textContent('#glance')).not.toMatch(/no hazard\b(?! data)/);
    await page.screenshot({ path: 'screenshots/sheet-default.png', fullPage: false });

    await page.fill('#sheet-options input[name="sampleVolume"]', '200 uL');
    await page.fill('#sheet-options input[name="replicates"]', '2');
    await page.click('#rebuild');
    await page.waitForFunction(() => /2 replicates each/.test(document.getElementById('sheet-status')?.textContent ?? ''));
    const after = await pipettingRows(page);
    expect(after).not.toEqual(before);
    expect(after[0]![0]).toMatch(/^C0\sa–\u2060b$/);
    expect(after).toEqual(await serviceRows('sampleVolume=200%20uL&replicates=2'));
    expect(await page.textContent('#sec-pipetting')).toContain('Tubes of 200 µL, 2 replicates per row');
    // the page URL and the links carry the options
    expect(page.url()).toContain('sampleVolume=200+uL');
    const md = await page.getAttribute('#link-md', 'href');
    expect(md).toMatch(/format=md/);
    expect(md).toMatch(/replicates=2/);
    const mdText = await page.evaluate(async (u) => (await fetch(u!)).text(), md);
    expect(mdText).toContain('Tubes of 200 µL, 2 replicates per row');
    const json = await page.getAttribute('#link-json', 'href');
    const js = (await page.evaluate(async (u) => (await fetch(u!)).json(), json)) as { options: { replicates: number; sampleVolume: { value: number } } };
    expect(js.options).toMatchObject({ replicates: 2, sampleVolume: { value: 200 } });
    expect(await page.getAttribute('#to-outcomes', 'href')).toMatch(new RegExp(`^/plans/${planId}/outcomes\\?.*replicates=2`));
    await page.screenshot({ path: 'screenshots/sheet-options.png', fullPage: false });
    await page.locator('#sec-pipetting').screenshot({ path: 'screenshots/sheet-pipetting.png' });
    expect(errors).toEqual([]);
    await page.close();
  }, 120_000);

  it('prints the sheet alone: the pipetting table and the hazards are in the PDF, the form is not', async () => {
    const { page, errors } = await open(`${base}/plans/${planId}/sheet`);
    await page.waitForSelector('#sec-hazards');
    await page.emulateMedia({ media: 'print' });
    expect(await page.isVisible('#sheet-options')).toBe(false);
    expect(await page.isVisible('#glance')).toBe(false);
    expect(await page.isVisible('#sec-pipetting')).toBe(true);
    expect(await page.isVisible('#sec-hazards')).toBe(true);
    await page.screenshot({ path: 'screenshots/sheet-print-media.png', fullPage: false });
    const pdf = await page.pdf({ preferCSSPageSize: true, printBackground: true });
    expect(pdf.subarray(0, 5).toString()).toBe('%PDF-');
    writeFileSync('screenshots/sheet-print.pdf', pdf);
    const text = pdfText(pdf);
    expect(text).toContain('Pipetting');
    expect(text).toMatch(/D8\sa–/);
    expect(text).toContain('Hazards and safe handling');
    expect(text).toContain('H318');
    expect(text).toMatch(/take\s*precedence/);
    expect(text).not.toContain('Update the sheet');
    expect(errors).toEqual([]);
    await page.close();
  }, 120_000);

  it('an impossible option shows why and its fixes; a fix applied with its button makes the sheet', async () => {
    const { page, errors } = await open(`${base}/plans/${planId}/sheet?sampleVolume=5%20uL`);
    await page.waitForSelector('#fixes .not-fit');
    expect(await page.textContent('#fixes')).toMatch(/in a 5 µL tube/);
    expect(await page.isVisible('#sec-pipetting')).toBe(false);
    const fix = page.locator('#fixes button.fix[data-option="sampleVolume"]');
    const label = await fix.textContent();
    expect(label).toMatch(/^Use \d+ µL$/);
    await page.screenshot({ path: 'screenshots/sheet-impossible.png', fullPage: false });
    await fix.click();
    await page.waitForSelector('#sec-pipetting tr[data-tube]');
    const volume = label!.replace(/^Use /, '').replace('µL', 'uL');
    expect(await page.inputValue('#sheet-options input[name="sampleVolume"]')).toBe(volume);
    expect(await page.textContent('#fixes')).toBe('');
    expect(await pipettingRows(page)).toEqual(await serviceRows(`sampleVolume=${encodeURIComponent(volume)}`));
    await page.screenshot({ path: 'screenshots/sheet-fixed.png', fullPage: false });
    expect(errors).toEqual([]);
    await page.close();
  }, 120_000);

  it('a candidate that does not cross offers the one that does, as a button', async () => {
    const { page, errors } = await open(`${base}/plans/${planId}/sheet?candidate=catb-0.22-l04`);
    await page.waitForSelector('#fixes .not-fit');
    expect(await page.textContent('#fixes')).toMatch(/cannot cross the boundary/);
    await page.click('#fixes button.fix[data-option="candidate"]');
    await page.waitForSelector('#sec-pipetting tr[data-tube]');
    expect(await page.inputValue('#sheet-options select[name="candidate"]')).toBe('ptj-1um-b07');
    expect(page.url()).toContain('candidate=ptj-1um-b07');
    expect(errors).toEqual([]);
    await page.close();
  }, 60_000);

  it('a refused option is shown beside its field, in words', async () => {
    const { page, errors } = await open(`${base}/plans/${planId}/sheet`);
    await page.waitForSelector('#sec-pipetting tr[data-tube]');
    await page.fill('#sheet-options input[name="doses"]', '0, lots');
    await page.click('#rebuild');
    await page.waitForSelector('.field-problem');
    expect(await page.textContent('.field-problem')).toMatch(/cannot read "lots"/);
    expect(await page.textContent('#sheet-status')).toMatch(/last one built/);
    // a refused request (400) is reported by the browser as a failed resource load; nothing else may appear
    expect(errors.filter((e) => !/status of 400/.test(e))).toEqual([]);
    await page.close();
  }, 120_000);
});
