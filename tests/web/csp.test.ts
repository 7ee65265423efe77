/// <reference lib="dom" />
/**
 * The pages satisfy the service's content security policy (server/http/access.ts): in Debian's
 * Chromium (playwright-core), every page — the Shelf, Calibrate, Planner, a bench sheet, the API
 * reference (Swagger UI) — is loaded and used while console errors, page errors and
 * `securitypolicyviolation` events are collected: there must be none. Then a service that wants a
 * token for reads and writes: the page asks for it once and works with it. 127.0.0.1 only.
 */
import { createServer } from 'node:http';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { tokensRepository } from '../../server/store/tokens.js';
import { startBrowserApp } from '../helpers/browser.js';
import { postPlan } from '../helpers/plans.js';

/** A page that records what went wrong on it: console errors, uncaught errors, CSP violations. */
async function watchedPage(browser: Browser): Promise<{ page: Page; problems: () => Promise<string[]> }> {
  const page = await browser.newPage();
  const seen: string[] = [];
  // a failed load is reported by its URL (the console's own line has none); the browser's own
  // request for /favicon.ico (a bench sheet names no icon) is not the page's
  page.on('console', (m) => {
    if (m.type() === 'error' && !m.text().startsWith('Failed to load resource')) seen.push(`console: ${m.text()}`);
  });
  page.on('response', (r) => {
    if (r.status() >= 400 && new URL(r.url()).pathname !== '/favicon.ico') seen.push(`HTTP ${r.status()}: ${r.url()}`);
  });
  page.on('pageerror', (e) => seen.push(`page error: ${e.message}`));
  // added through the browser's debugging protocol, so the policy does not apply to this script
  await page.addInitScript(() => {
    const w = window as unknown as { __csp: string[] };
    w.__csp = [];
    document.addEventListener('securitypolicyviolation', (e) => w.__csp.push(`CSP: ${e.violatedDirective} blocked ${e.blockedURI || '(inline)'} in ${e.sourceFile}:${e.lineNumber}`));
  });
  return { page, problems: async () => [...seen, ...(await page.evaluate(() => (window as unknown as { __csp: string[] }).__csp))] };
}

describe('no CSP violation on any page', () => {
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

  it('the Shelf page lists, searches; no violation', async () => {
    const { page, problems } = await watchedPage(browser);
    await page.goto(`${base}/`);
    await page.waitForSelector('#species tbody tr');
    await page.fill('#q', 'janus');
    await page.waitForFunction(() => document.querySelectorAll('#species tbody tr').length === 3);
    expect(await problems()).toEqual([]);
    await page.close();
  }, 60_000);

  it('the Calibrate page fits and stores a measurement (two writes from the page); no violation', async () => {
    const { page, problems } = await watchedPage(browser);
    await page.goto(`${base}/calibrate`);
    await page.waitForSelector('#species option', { state: 'attached' });
    await page.click('#run');
    await page.waitForSelector('#params:not([hidden])');
    await page.click('#store');
    await page.waitForFunction(() => /stored as measurement \d+/.test(document.getElementById('status')?.textContent ?? ''));
    expect(await page.textContent('#error')).toBe('');
    expect(await problems()).toEqual([]);
    await page.close();
  }, 60_000);

  it('the Planner page runs a plan and draws it; a bench sheet opens; no violation', async () => {
    const { page, problems } = await watchedPage(browser);
    await page.goto(`${base}/planner`);
    await page.waitForSelector('#base option', { state: 'attached' });
    await page.fill('#samples', '0');
    await page.check('#withMap');
    await page.click('#run');
    await page.waitForFunction(() => /plan \d+ stored/.test(document.getElementById('status')?.textContent ?? ''), undefined, { timeout: 50_000 });
    expect(await page.isVisible('#mapFigure')).toBe(true);
    expect(await problems()).toEqual([]);
    await page.close();

    const r = await postPlan(app, { base: [{ id: 'ptj-1um-b09', volumeFraction: '0.1 percent' }], chemicals: { h2o2: '200 mM' }, chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' }, boundary: 'stationary', candidates: ['ptj-1um-b07'] });
    expect(r.statusCode).toBe(201);
    for (const paper of ['A4', 'Letter']) {
      const sheet = await watchedPage(browser);
      await sheet.page.goto(`${base}/api/plans/${r.json().id}/sheet?format=html&paper=${paper}`);
      expect(await sheet.page.title()).toMatch(/^Bench sheet/);
      // the inline style applied (allowed by its hash): headings carry its border
      expect(await sheet.page.$eval('h2', (h) => getComputedStyle(h).borderBottomStyle)).toBe('solid');
      expect(await sheet.problems()).toEqual([]);
      await sheet.page.close();
    }
  }, 90_000);

  it('the API reference (Swagger UI) renders its operations; no violation', async () => {
    const { page, problems } = await watchedPage(browser);
    await page.goto(`${base}/api/docs`);
    await page.waitForSelector('.opblock', { timeout: 30_000 });
    expect(await page.$$eval('.opblock', (o) => o.length)).toBeGreaterThan(20);
    expect(await problems()).toEqual([]);
    await page.close();
  }, 60_000);

  it('a page of this service cannot be framed by a page of another origin', async () => {
    // the other origin: a page on another port of 127.0.0.1 that frames the Shelf page
    const other = createServer((_req, res) => res.writeHead(200, { 'content-type': 'text/html' }).end(`<iframe src="${base}/" width="600" height="400"></iframe>`));
    await new Promise<void>((r) => other.listen(0, '127.0.0.1', r));
    const page = await browser.newPage();
    try {
      await page.goto(`http://127.0.0.1:${(other.address() as { port: number }).port}/`);
      await page.waitForTimeout(1500);
      const framed = page.frames().find((f) => f !== page.mainFrame())!;
      const text = await framed.evaluate(() => document.body?.textContent ?? '').catch(() => '(not readable)');
      expect(text).not.toMatch(/Species/);
    } finally {
      await page.close();
      await new Promise((r) => other.close(r));
    }
  }, 60_000);
});

describe('a service that wants a token for reads and writes, in the browser', () => {
  let app: App;
  let browser: Browser;
  let base = '';
  beforeAll(async () => {
    ({ app, browser, base } = await startBrowserApp({ tokenForReads: true }));
  }, 60_000);
  afterAll(async () => {
    await browser?.close();
    await app?.close();
  });

  it('the page asks for the token once, then lists and writes with it', async () => {
    const secret = tokensRepository(app.db).create('Ada (invented)').secret;
    const { page, problems } = await watchedPage(browser);
    const asked: string[] = [];
    page.on('dialog', (d) => {
      asked.push(d.message());
      void d.accept(secret);
    });
    await page.goto(`${base}/calibrate`);
    await page.waitForSelector('#species option', { state: 'attached' });
    expect(asked).toHaveLength(1);
    expect(asked[0]).toMatch(/token for reads/);
    await page.click('#run');
    await page.waitForSelector('#params:not([hidden])');
    await page.click('#store');
    await page.waitForFunction(() => /stored as measurement \d+/.test(document.getElementById('status')?.textContent ?? ''));
    expect(asked).toHaveLength(1);
    const id = Number(/measurement (\d+)/.exec((await page.textContent('#status')) ?? '')![1]);
    const stored = await app.inject({ method: 'GET', url: `/api/measurements/${id}`, headers: { authorization: `Bearer ${secret}` } });
    expect(stored.json().author).toBe('Ada (invented)');
    // the one 401 is the first load, before the page asked; nothing else
    expect((await problems()).filter((p) => !/^HTTP 401: .*\/api\/species\?limit=500$/.test(p))).toEqual([]);

    // the same tab's Planner: no second question; a plan runs (its progress by polling, since an
    // event stream cannot carry the header) and its bench sheet link opens the sheet fetched with the token
    await page.goto(`${base}/planner`);
    await page.waitForSelector('#base option', { state: 'attached' });
    await page.fill('#samples', '0');
    await page.click('#run');
    await page.waitForFunction(() => /plan \d+ stored/.test(document.getElementById('status')?.textContent ?? ''), undefined, { timeout: 50_000 });
    expect(asked).toHaveLength(1);
    const [sheet] = await Promise.all([page.context().waitForEvent('page'), page.click('#results a')]);
    await sheet.waitForFunction(() => document.title.startsWith('Bench sheet'), undefined, { timeout: 20_000 });
    expect(await sheet.$eval('h2', (h) => getComputedStyle(h).borderBottomStyle)).toBe('solid');
    await sheet.close();
    await page.close();
  }, 90_000);
});
