/// <reference lib="dom" />
/**
 * The "What forms past onset" page in a real browser (Debian's Chromium via playwright-core): from a plan
 * over the demo shelf (tests/helpers/plans.ts), run with small settings, a kymograph per dose of the bench
 * sheet's series (the doses the service's JSON sheet lists), the growth comparison and the cluster make-up;
 * a second run cancelled; a 2D run with its frames; no console errors, failed requests or CSP violations.
 */
import { mkdirSync } from 'node:fs';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { startBrowserApp } from '../helpers/browser.js';
import { planRequest, postPlan } from '../helpers/plans.js';

let app: App;
let browser: Browser;
let base = '';
let planId = 0;
let page: Page;
const problems: string[] = [];

beforeAll(async () => {
  ({ app, browser, base } = await startBrowserApp());
  const r = await postPlan(app, planRequest);
  expect(r.statusCode).toBe(201);
  planId = (r.json() as { id: number }).id;
  mkdirSync('screenshots', { recursive: true });
  page = await browser.newPage({ viewport: { width: 1280, height: 800 } });
  page.on('console', (m) => {
    if (m.type() === 'error') problems.push(`console: ${m.text()}`);
  });
  page.on('response', (r) => {
    if (r.status() >= 400) problems.push(`HTTP ${r.status()}: ${r.request().method()} ${r.url()}`);
  });
  page.on('pageerror', (e) => problems.push(`page error: ${e.message}`));
  await page.addInitScript(() => {
    document.addEventListener('securitypolicyviolation', (e) => console.error(`CSP: ${e.violatedDirective} blocked ${e.blockedURI || '(inline)'}`));
  });
}, 120_000);

afterAll(async () => {
  await browser?.close();
  await app?.close();
});

describe('the What forms page', () => {
  it('runs the sheet series and shows a kymograph, the growth comparison and the cluster make-up per dose', async () => {
    const sheet = (await app.inject({ method: 'GET', url: `/api/plans/${planId}/sheet?format=json&candidate=ptj-1um-b07` })).json();
    const doses = sheet.tubes.filter((t: { kind: string }) => t.kind === 'series' || t.kind === 'no-dopant');
    await page.goto(`${base}/plans/${planId}/forms?candidate=ptj-1um-b07`);
    await page.waitForSelector('form.options');
    expect(await page.textContent('h1')).toBe('What forms past onset');
    await page.screenshot({ path: 'screenshots/forms-empty.png' });
    // 256 cells: the kymograph shows 128 positions, each the mean of 2 cells, and says so under the plot
    await page.selectOption('#points', '256');
    // the default 12 growth times: a clear pattern at every dose that grows
    await page.click('form.options button[type="submit"]');
    await page.waitForSelector('section.dose', { timeout: 120_000 });
    const sections = await page.$$('section.dose');
    expect(sections).toHaveLength(doses.length);
    // one kymograph per dose, with its axes in units and a colour legend
    expect(await page.$$eval('section.dose figure.plot-figure', (f) => f.filter((x) => /Kymograph/.test(x.textContent ?? '')).length)).toBe(doses.length);
    const first = await page.textContent('section.dose:nth-of-type(1)');
    expect(first).toMatch(/0 particles\/mL/);
    // the no-dopant control is stable: the page never says its pattern grows (a fit of its decaying unevenness is not growth)
    expect(first).toMatch(/stable/);
    expect(first).toMatch(/growthdecays \(×1\/e every [^)]*\)(not measurable: the pattern did not grow|decays)/);
    // the dopant is absent from the control: its row says so, never "pushed out" or "gathered"
    const controlRow = await page.textContent('section.dose:nth-of-type(1) table.compare tr.absent');
    expect(controlRow).toMatch(/^ptj-1um-b07—absent at this dose/);
    expect(first).not.toMatch(/ptj-1um-b07[^a-z]*(pushed out|gathered)/);
    // no pattern in the control: the colour range is held (not stretched to the starting unevenness) and no dominant length is drawn
    expect(first).toMatch(/No pattern: every species stays within [\d.]+ % of its mean over the whole run \(only the starting unevenness, dying away\); the colour range is held at ±1 % of the mean/);
    expect(await page.$$('section.dose:nth-of-type(1) p.no-length')).toHaveLength(1);
    // warnings: the page's words first, the engine's SI message in a closed details; never a bare code
    const items = await page.$$eval('section.dose .warnings li, .every-dose li', (li) =>
      li.map((x) => ({ code: x.getAttribute('data-code'), words: x.querySelector('.words')?.textContent ?? '', open: x.querySelector('details')?.open, summary: x.querySelector('summary')?.textContent })),
    );
    expect(items.length).toBeGreaterThan(0);
    for (const w of items) {
      expect(w.words, w.code ?? '').toMatch(/^[A-Z].*\.$/);
      expect(w.words).not.toContain(w.code);
      expect(w.words).not.toMatch(/\de[+-]\d|`|analyze\(|§/);
      expect(w.open).toBe(false);
      expect(w.summary).toBe('details (as the engine reports it, SI units)');
    }
    // the control's dopant is absent: said once, in words, with the engine's own message behind details
    expect(items.map((w) => w.code)).toContain('absent-species');
    await page.locator('section.dose:nth-of-type(1)').screenshot({ path: 'screenshots/forms-control.png' });
    if (await page.$('.every-dose')) await page.locator('.every-dose').screenshot({ path: 'screenshots/forms-every-dose.png' });
    // the series is the sheet's default, and the page says so
    expect(await page.textContent('#doses-from')).toMatch(/^Doses: the bench sheet's default series — /);
    const text = await page.textContent('#results');
    expect(text).toMatch(/position across the chamber \(mm\)/);
    expect(text).toMatch(/time \((min|h|s)\)/);
    expect(text).toMatch(/total volume fraction \(%\)/);
    // a display grid is not the simulation's: each picture says what it shows of it
    // (the engine stores 201 frames, and one more at the end of a run that stops between two)
    const notes = await page.$$eval('section.dose p.shown', (p) => p.map((x) => x.textContent));
    expect(notes).toHaveLength(doses.length);
    for (const note of notes)
      expect(note).toMatch(/^Shown at 128 positions, each the mean of 2 of the 256 simulated cells, 101 of the 20[12] stored times\. Averaging keeps each species' amount but widens and lowers clusters narrower than a shown cell\. The clusters, lengths and growth on this page are measured on the full simulated grid\.$/);
    expect(text).toMatch(/linear prediction/);
    expect(text).toMatch(/measured in the run/);
    expect(text).toMatch(/share of its particles in clusters/);
    expect(text).toMatch(/would run out/);
    // the largest dose grows: its measured growth is a time, and a cluster formed with the candidate gathered
    const lastDose = await page.textContent('section.dose:last-of-type');
    expect(lastDose).toMatch(/grows ×e every/);
    expect(lastDose).toMatch(/ptj-1um-b07\s*[\d.]+ %\s*gathered/);
    await page.screenshot({ path: 'screenshots/forms-run.png', fullPage: false });
    await page.$eval('section.dose:last-of-type', (el) => el.scrollIntoView());
    await page.screenshot({ path: 'screenshots/forms-dose.png' });
    // per species colour
    await page.selectOption('#show', '1');
    expect(await page.textContent('#results')).toMatch(/ptj-1um-b07: density ÷ its mean/);
  }, 240_000);

  it('cancels a second run', async () => {
    await page.selectOption('#points', '512');
    await page.fill('#growth-times', '30');
    await page.click('form.options button[type="submit"]');
    await page.waitForSelector('.job progress');
    await page.click('.job button');
    await page.waitForFunction(() => /cancelled/.test(document.querySelector('.job .stage')?.textContent ?? ''), null, { timeout: 30_000 });
    expect(await page.textContent('#messages')).toMatch(/cancelled/);
    // the results of the first run stay
    expect((await page.$$('section.dose')).length).toBeGreaterThan(0);
    await page.screenshot({ path: 'screenshots/forms-cancelled.png' });
  }, 60_000);

  it('the sheet page links here for its candidate', async () => {
    await page.goto(`${base}/plans/${planId}/sheet?candidate=ptj-1um-b07`);
    await page.waitForSelector('#to-forms');
    expect(await page.getAttribute('#to-forms', 'href')).toBe(`/plans/${planId}/forms?candidate=ptj-1um-b07`);
  }, 60_000);

  it('a sheet opened with its own doses carries them here, and the page simulates those (and says so)', async () => {
    await page.goto(`${base}/plans/${planId}/sheet?candidate=ptj-1um-b07&doses=${encodeURIComponent('0,1e8 1/mL,2.5e8 1/mL')}`);
    await page.waitForSelector('#sec-pipetting tr[data-tube]');
    const href = await page.getAttribute('#to-forms', 'href');
    expect(href).toBe(`/plans/${planId}/forms?candidate=ptj-1um-b07&doses=${encodeURIComponent('0,1e8 1/mL,2.5e8 1/mL').replace(/%20/g, '+')}`);
    await page.click('#to-forms');
    await page.waitForSelector('form.options');
    expect(await page.inputValue('#doses')).toBe('0, 1e8 1/mL, 2.5e8 1/mL');
    const bodies: unknown[] = [];
    const listen = (r: import('playwright-core').Request) => {
      if (r.method() === 'POST' && /\/simulate$/.test(r.url())) bodies.push(r.postDataJSON());
    };
    page.on('request', listen);
    await page.selectOption('#points', '32');
    await page.fill('#growth-times', '2');
    await page.click('form.options button[type="submit"]');
    // once Run is pressed, the "choose the options and Run" note is hidden (then replaced by the results)
    expect(await page.$eval('#results', (r) => (r.querySelector('.empty') as HTMLElement | null)?.hidden ?? true)).toBe(true);
    await page.waitForSelector('#results section.dose', { timeout: 120_000 });
    page.off('request', listen);
    expect(bodies).toHaveLength(1);
    expect((bodies[0] as { doses: string[] }).doses).toEqual(['0', '1e8 1/mL', '2.5e8 1/mL']);
    expect(await page.$$('section.dose')).toHaveLength(3);
    expect(await page.textContent('#doses-from')).toBe("Doses: the series the bench sheet was built with (0, 1e8 1/mL, 2.5e8 1/mL), carried here by its link.");
    expect(await page.textContent('#results')).not.toMatch(/the bench sheet's default series/);
    // the dose headings: particles/mL with µg/mL beside them, as the plan page writes a dose
    expect(await page.textContent('section.dose:nth-of-type(3) h3')).toMatch(/^2\.5 × 10⁸ particles\/mL \([\d.]+ µg\/mL\)/);
    await page.locator('#results').screenshot({ path: 'screenshots/forms-sheet-doses.png' });
    // more than the route takes: said on the page before any request
    await page.fill('#doses', Array.from({ length: 13 }, (_, i) => `${i}e7 1/mL`).join(', '));
    await page.click('form.options button[type="submit"]');
    expect(await page.textContent('#messages')).toMatch(/13 doses: this page simulates at most 12/);
  }, 180_000);

  it('a candidate that does not cross asks for doses on the page (it has no bench-sheet series)', async () => {
    await page.goto(`${base}/plans/${planId}/forms?candidate=catb-0.22-l04`);
    await page.waitForSelector('form.options');
    expect(await page.textContent('#candidate option[value="catb-0.22-l04"]')).toBe('catb-0.22-l04 (does not cross: type the doses to simulate below)');
    expect(await page.textContent('#results .empty')).toMatch(/each dose you type is simulated/);
    await page.click('form.options button[type="submit"]');
    expect(await page.textContent('#messages')).toMatch(/catb-0\.22-l04 does not cross the boundary, so it has no bench-sheet series: type the doses to simulate/);
    expect(await page.$$('.job progress')).toHaveLength(0);
  }, 60_000);

  it('2D: the frames with a slider and Play', async () => {
    await page.goto(`${base}/plans/${planId}/forms?candidate=ptj-1um-b07`);
    await page.waitForSelector('form.options');
    await page.selectOption('#dims', '2');
    // the smallest 2D grid is 32 × 32 (at 16 × 16 single bright cells read as clusters)
    expect(await page.$$eval('#points option', (o) => o.map((x) => (x as HTMLOptionElement).value))).toEqual(['32', '64']);
    await page.selectOption('#points', '32');
    await page.fill('#growth-times', '2');
    await page.click('form.options button[type="submit"]');
    await page.waitForSelector('section.dose canvas', { timeout: 180_000 });
    expect(await page.$$('section.dose canvas')).toHaveLength((await page.$$('section.dose')).length);
    const slider = page.locator('section.dose:last-of-type input[type="range"]');
    await slider.fill('0');
    expect(await page.textContent('section.dose:last-of-type output')).toMatch(/frame 1 of 12/);
    expect(await page.textContent('section.dose:last-of-type p.shown')).toMatch(/^Shown at all 32 × 32 simulated cells, 12 frames\. The clusters/);
    await page.click('section.dose:last-of-type button:has-text("Play")');
    await page.waitForFunction(() => /frame [2-9]/.test(document.querySelector('section.dose:last-of-type output')?.textContent ?? ''), null, { timeout: 10_000 });
    await page.$eval('section.dose:last-of-type', (el) => el.scrollIntoView());
    await page.screenshot({ path: 'screenshots/forms-2d.png' });
    expect(problems).toEqual([]);
  }, 240_000);
});
