/// <reference lib="dom" />
/**
 * The pages satisfy the service's content security policy (server/http/access.ts): in Debian's
 * Chromium (playwright-core), every page — the Shelf and an item, Calibrate, the Planner, a plan, its
 * sheet and outcomes pages, the service's print HTML of a sheet, the API reference (Swagger UI) — is
 * loaded and used while console errors, page errors and
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

  it('every page, used a little, breaks no rule of the policy and logs no error', async () => {
    const r = await postPlan(app, { base: [{ id: 'ptj-1um-b09', volumeFraction: '0.1 percent' }], chemicals: { h2o2: '200 mM' }, chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' }, boundary: 'stationary', candidates: ['ptj-1um-b07'], uncertainty: { samples: 20, seed: 1 }, stateMap: { baseSteps: 6, doseSteps: 6 } });
    expect(r.statusCode).toBe(201);
    const id = (r.json() as { id: number }).id;
    // each page: its address, what shows it is drawn, and a small use of it
    const tour: [string, string, ((p: Page) => Promise<void>) | null][] = [
      ['/', '#species tbody tr', async (p) => {
        await p.fill('#q', 'janus');
        await p.waitForFunction(() => document.querySelectorAll('#species tbody tr').length === 3);
      }],
      ['/shelf/species/ptj-1um-b07', '#item-form', async (p) => {
        await p.fill('input[name="diffusivity"]', '0.25 um^2/s');
        await p.locator('.coef[data-key="diffusivity"] output.si.ok').waitFor();
      }],
      ['/shelf/chemicals/h2o2', '#item-form', null],
      ['/shelf/new?kind=chemical', '#item-form', null],
      ['/calibrate?species=silica-1um-t01', '#data', async (p) => {
        await p.fill('#data', 'lag [s],msd [um^2]\n0.1,0.092\n0.2,0.175\n0.5,0.44\n1,0.90\n2,1.77\n5,4.41\n');
        await p.click('#run');
        await p.waitForSelector('#parameters');
        await p.waitForSelector('figure svg');
      }],
      ['/planner', 'form', null],
      [`/plans/${id}`, 'table.ranked tbody tr', async (p) => {
        await p.click('table.ranked button.pick[data-species="ptj-1um-b07"]');
        await p.waitForSelector('#detail figure svg[aria-label^="Growth rate"]');
      }],
      [`/plans/${id}/sheet?candidate=ptj-1um-b07`, '#sec-pipetting tr[data-tube]', null],
      [`/plans/${id}/outcomes`, '#tubes tbody tr', null],
    ];
    for (const [url, ready, use] of tour) {
      const { page, problems } = await watchedPage(browser);
      await page.goto(`${base}${url}`);
      await page.waitForSelector(ready, { timeout: 30_000 });
      if (use) await use(page);
      expect(await problems(), url).toEqual([]);
      await page.close();
    }
    // the service's own print HTML of a sheet, in both paper sizes: its one inline style is allowed by its hash
    for (const paper of ['A4', 'Letter']) {
      const sheet = await watchedPage(browser);
      await sheet.page.goto(`${base}/api/plans/${id}/sheet?format=html&paper=${paper}`);
      expect(await sheet.page.title()).toMatch(/^Bench sheet/);
      expect(await sheet.page.$eval('h2', (h) => getComputedStyle(h).borderBottomStyle)).toBe('solid');
      expect(await sheet.problems()).toEqual([]);
      await sheet.page.close();
    }
  }, 180_000);

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
    await page.goto(`${base}/calibrate?species=silica-1um-t01`);
    await page.waitForFunction(() => (document.getElementById('species') as HTMLSelectElement | null)?.value === 'silica-1um-t01');
    expect(asked).toHaveLength(1);
    expect(asked[0]).toMatch(/token for reads/);
    await page.fill('#data', 'lag [s],msd [um^2]\n0.1,0.092\n0.2,0.175\n0.5,0.44\n1,0.90\n2,1.77\n5,4.41\n');
    await page.click('#run');
    await page.waitForSelector('#parameters');
    await page.click('#store');
    await page.waitForSelector('#stored');
    expect(asked).toHaveLength(1);
    const id = Number(/measurement (\d+)/.exec((await page.textContent('#stored')) ?? '')![1]);
    const stored = await app.inject({ method: 'GET', url: `/api/measurements/${id}`, headers: { authorization: `Bearer ${secret}` } });
    expect(stored.json().author).toBe('Ada (invented)');
    // the refused first reads, before the page asked; nothing else
    expect((await problems()).filter((p) => !/^HTTP 401: /.test(p))).toEqual([]);

    // the same tab's Planner: no second question; a plan runs (its progress by polling, since an
    // event stream cannot carry the header), its page opens, and its sheet page reads with the token
    await page.goto(`${base}/planner`);
    await page.getByRole('group', { name: /chemical level: h2o2/ }).getByText('= 200 mM').waitFor();
    await page.getByRole('checkbox', { name: /Give each threshold a band/ }).uncheck();
    await page.getByRole('button', { name: 'Run the plan' }).click();
    await page.waitForURL(/\/plans\/\d+$/, { timeout: 60_000 });
    await page.waitForSelector('table.ranked tbody tr');
    await page.locator('table.ranked a', { hasText: 'bench sheet' }).first().click();
    await page.waitForSelector('#sec-pipetting tr[data-tube]', { timeout: 30_000 });
    expect(asked).toHaveLength(1);
    await page.close();
  }, 90_000);
});
