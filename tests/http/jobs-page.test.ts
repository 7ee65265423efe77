/// <reference lib="dom" />
/**
 * The Planner page runs its plan as a job (in Debian's Chromium via playwright-core, the
 * service on 127.0.0.1 only): the Run button starts the job, the page shows its progress
 * and a Cancel button, and Cancel ends the job as cancelled with no plan stored.
 */
import type { Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { startBrowserApp } from '../helpers/browser.js';

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

describe('the Planner page and jobs', () => {
  it('shows the running job with its progress and a Cancel button; Cancel stops it and nothing is stored', async () => {
    const page = await browser.newPage();
    await page.goto(`${base}/planner`);
    await page.waitForSelector('#base option', { state: 'attached' });
    expect(await page.isVisible('#jobBox')).toBe(false);
    // a long plan: every candidate with 2000 draws (the API's most) and a state map
    await page.fill('#samples', '2000');
    await page.check('#withMap');
    await page.click('#run');
    await page.waitForSelector('#jobBox:not([hidden])');
    await page.waitForFunction(() => /^running: \d+ % — /.test(document.getElementById('jobStage')?.textContent ?? ''));
    expect(await page.isDisabled('#run')).toBe(true);
    const jobs = (await (await fetch(`${base}/api/jobs`)).json()) as { items: { id: string; state: string }[] };
    expect(jobs.items[0]!.state).toBe('running');
    await page.click('#cancel');
    await page.waitForFunction(() => document.getElementById('status')?.textContent === 'cancelled: nothing was stored');
    expect(await page.isVisible('#jobBox')).toBe(false);
    expect(await page.isDisabled('#run')).toBe(false);
    expect(((await (await fetch(`${base}/api/jobs/${jobs.items[0]!.id}`)).json()) as { state: string }).state).toBe('cancelled');
    expect(((await (await fetch(`${base}/api/plans`)).json()) as { total: number }).total).toBe(0);
    await page.close();
  }, 60_000);
});
