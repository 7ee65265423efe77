/// <reference lib="dom" />
/**
 * The Planner page (/planner) in Debian's Chromium (playwright-core), over the demo shelf, 127.0.0.1 only:
 * compose a two-species base with peroxide, choose two candidates, run with Monte Carlo draws, watch the
 * progress bar move and land on /plans/<id>; a request the service refuses (a cap above the schema's
 * 0.74) shows the service's words beside the field; a long plan (every candidate, many draws) is
 * cancelled: the job ends `cancelled` and no plan is stored for it; the same with a 1 s time limit ends
 * `timed-out`, said in words, nothing stored; the stored plans list shows the
 * finished plan, and loading it puts its request back into the form. No console or page errors.
 * Screenshots: screenshots/planner-*.png.
 */
import { mkdirSync } from 'node:fs';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { startBrowserApp } from '../helpers/browser.js';

const SHOTS = 'screenshots';

describe('the Planner page', () => {
  let app: App;
  let browser: Browser;
  let base = '';
  let page: Page;
  const problems: string[] = [];
  /** responses >= 400 the test asks for on purpose (the refused request) */
  const expected = new Set<string>();
  beforeAll(async () => {
    ({ app, browser, base } = await startBrowserApp());
    mkdirSync(SHOTS, { recursive: true });
    page = await browser.newPage({ viewport: { width: 1280, height: 800 } });
    page.on('console', (m) => {
      if (m.type() === 'error' && !m.text().startsWith('Failed to load resource')) problems.push(`console: ${m.text()}`);
    });
    page.on('pageerror', (e) => problems.push(`page error: ${e.message}`));
    page.on('response', (r) => {
      const key = `${r.request().method()} ${new URL(r.url()).pathname} ${r.status()}`;
      if (r.status() >= 400 && new URL(r.url()).pathname !== '/favicon.ico' && !expected.has(key)) problems.push(`HTTP ${key}`);
    });
  }, 60_000);
  afterAll(async () => {
    await browser?.close();
    await app?.close();
  });

  const plansStored = async () => (await app.inject({ url: '/api/plans' })).json() as { total: number; items: { id: number; request: Record<string, unknown> }[] };

  it('starts with the demo defaults and an empty list of stored plans', async () => {
    await page.goto(`${base}/planner`);
    await page.getByRole('heading', { name: 'Planner' }).waitFor();
    await page.getByText('No plans stored yet.').waitFor();
    // the defaults: ptj-1um-b09 at 0.1 %, h2o2 at 200 mM, a sealed 2 mm × 100 µm chamber, every candidate
    const base0 = page.getByRole('group', { name: /base species 1/ });
    expect(await base0.getByLabel('species').inputValue()).toBe('ptj-1um-b09');
    expect(await base0.getByLabel('amount (volume fraction)', { exact: true }).inputValue()).toBe('0.1 %');
    await base0.getByText('= 0.1 %').waitFor(); // the service read it (SI shown inline)
    const chem0 = page.getByRole('group', { name: /chemical level: h2o2/ });
    expect(await chem0.getByLabel('concentration', { exact: true }).inputValue()).toBe('200 mM');
    await chem0.getByText('= 200 mM').waitFor();
    expect(await page.getByLabel('walls').inputValue()).toBe('sealed');
    expect(await page.getByLabel('length L').inputValue()).toBe('2 mm');
    expect(await page.getByLabel('depth H').inputValue()).toBe('100 um');
    expect(await page.getByRole('radio', { name: /^all/ }).isChecked()).toBe(true);
    await page.screenshot({ path: `${SHOTS}/planner-start.png`, fullPage: true });
  }, 60_000);

  it('composes a two-species base, is refused with the service’s words beside a field, then runs and lands on the plan', async () => {
    // an enzyme's untouched amount follows its kind (nM); a row can be removed
    await page.getByRole('button', { name: '+ Add a species to the base' }).click();
    const extra = page.getByRole('group', { name: /base species 2/ });
    await extra.getByLabel('species').selectOption('catalase-e3');
    expect(await extra.getByLabel('amount given as').inputValue()).toBe('molarConcentration');
    expect(await extra.getByLabel('amount (molar concentration)', { exact: true }).inputValue()).toBe('10 nM');
    await extra.getByText('= 10 nM').waitFor();
    await page.getByRole('button', { name: 'Remove catalase-e3 from the base' }).click();
    expect(await page.getByRole('group', { name: /base species \d/ }).count()).toBe(1);

    await page.getByRole('button', { name: '+ Add a species to the base' }).click();
    const row2 = page.getByRole('group', { name: /base species 2/ });
    await row2.getByLabel('species').selectOption('catb-0.22-l04');
    await row2.getByLabel('amount (volume fraction)', { exact: true }).fill('0.05 %');
    await row2.getByText('= 0.05 %').waitFor();
    // the candidate pool leaves out the base; tick two
    const pool = page.getByRole('group', { name: 'candidate species' });
    expect(await pool.getByRole('checkbox').count()).toBe(6); // 8 demo species, 2 in the base
    expect(await pool.getByLabel(/catb-0\.22-l04/).count()).toBe(0);
    await pool.getByLabel(/ptj-1um-b07/).check();
    await pool.getByLabel(/ptj-swim-0\.5-s02/).check();
    expect(await page.getByRole('radio', { name: /^chosen/ }).isChecked()).toBe(true);
    await page.getByText('2 chosen of 6').waitFor();
    await page.getByLabel('draws', { exact: true }).fill('1000'); // enough work (2 candidates × 1,001 draws) that the page sees the bar between 0 and 1 on a quiet machine too
    await page.getByLabel('seed', { exact: true }).fill('7');

    // a cap the schema refuses (at most 0.74): the service's words, beside the field
    expected.add('POST /api/plans 400');
    await page.getByLabel('cap: largest total volume fraction', { exact: true }).fill('80 %');
    await page.getByText('= 80 %').waitFor();
    await page.getByRole('button', { name: 'Run the plan' }).click();
    const capField = page.locator('.field.has-problem', { has: page.getByLabel('cap: largest total volume fraction', { exact: true }) });
    await capField.locator('.problem').waitFor();
    expect(await capField.locator('.problem').textContent()).toMatch(/0\.74/);
    expect(await page.locator('#messages').textContent()).toMatch(/refused/);
    await page.screenshot({ path: `${SHOTS}/planner-refused.png` });
    expect((await plansStored()).total).toBe(0);
    expected.delete('POST /api/plans 400');
    await page.getByLabel('cap: largest total volume fraction', { exact: true }).fill('');
    expect(await page.locator('form .problem').count()).toBe(0); // changing the field takes its problem away
    await page.screenshot({ path: `${SHOTS}/planner-form.png`, fullPage: true });

    // run: the bar moves (fractions strictly between 0 and 1, stages naming the candidates), then the plan's page
    await page.getByRole('button', { name: 'Run the plan' }).click();
    const bar = page.getByRole('progressbar', { name: 'Computing the plan: progress' });
    await bar.waitFor();
    const seen: { value: number; stage: string }[] = [];
    let shot = false;
    while (!/\/plans\/\d+$/.test(page.url())) {
      const s = await page
        .evaluate(() => ({ value: (document.querySelector('.job progress') as HTMLProgressElement | null)?.value ?? -1, stage: document.querySelector('.job .stage')?.textContent ?? '' }))
        .catch(() => null); // the page navigated between two looks
      if (s && s.value >= 0) seen.push(s);
      if (s && !shot && s.value > 0 && s.value < 1) {
        await page.screenshot({ path: `${SHOTS}/planner-progress.png` }).catch(() => undefined);
        shot = true;
      }
      await new Promise((r) => setTimeout(r, 60));
    }
    const id = Number(/\/plans\/(\d+)$/.exec(page.url())![1]);
    // the bar moved: from 0, through values strictly between 0 and 1, never falling, to 1 with the stage in words
    // (the service reports at most about ten updates a second, and the page polls every 250 ms)
    const values = seen.map((s) => s.value);
    expect(values.some((v) => v > 0 && v < 1)).toBe(true);
    expect(values.every((v, i) => i === 0 || v >= values[i - 1]!)).toBe(true);
    expect(values.at(-1)).toBe(1);
    expect(seen.at(-1)!.stage).toBe('done');
    expect(new Set(seen.map((s) => s.stage)).size).toBeGreaterThanOrEqual(3);
    expect(seen.some((s) => /candidate \d of 2/.test(s.stage))).toBe(true);

    // what was stored is what the form said
    const plan = (await app.inject({ url: `/api/plans/${id}` })).json() as { request: Record<string, unknown>; result: { candidates: { species: string; band: { samples: number } | null }[] } };
    expect(plan.request.base).toEqual([
      { id: 'ptj-1um-b09', volumeFraction: '0.1 %' },
      { id: 'catb-0.22-l04', volumeFraction: '0.05 %' },
    ]);
    expect(plan.request.chemicals).toEqual({ h2o2: '200 mM' });
    expect(plan.request.chamber).toEqual({ walls: 'sealed', length: '2 mm', depth: '100 um' });
    expect(plan.request.candidates).toEqual(['ptj-1um-b07', 'ptj-swim-0.5-s02']);
    expect(plan.request.uncertainty).toEqual({ samples: 1000, seed: 7 });
    expect(plan.request).not.toHaveProperty('maxVolumeFraction');
    expect(plan.result.candidates.map((c) => c.species).sort()).toEqual(['ptj-1um-b07', 'ptj-swim-0.5-s02']);
    expect(plan.result.candidates.every((c) => c.band?.samples === 1000)).toBe(true);
  }, 120_000);

  it('cancels a long plan: the job ends cancelled and nothing is stored', async () => {
    await page.goto(`${base}/planner`);
    await page.getByRole('heading', { name: 'Stored plans' }).waitFor();
    await page.locator('table.plans-table').waitFor();
    await page.getByRole('group', { name: /chemical level: h2o2/ }).getByText('= 200 mM').waitFor();
    await page.getByLabel('draws', { exact: true }).fill('600'); // every candidate (7) × 601 draws: about a minute of work
    await page.getByRole('button', { name: 'Run the plan' }).click();
    const stage = page.locator('.job .stage');
    await page.waitForFunction(() => /candidate \d of 7/.test(document.querySelector('.job .stage')?.textContent ?? ''), null, { timeout: 30_000 });
    const jobs = (await app.inject({ url: '/api/jobs' })).json() as { items: { id: string; state: string }[] };
    const job = jobs.items[0]!;
    expect(job.state).toBe('running');
    expect(await page.getByRole('button', { name: 'Run the plan' }).isDisabled()).toBe(true); // one plan at a time from the form
    await page.screenshot({ path: `${SHOTS}/planner-running.png` });
    await page.getByRole('button', { name: 'Cancel' }).click();
    await page.getByText('The plan was cancelled: nothing was stored.').waitFor();
    expect(await stage.textContent()).toMatch(/cancelled/);
    expect(await page.getByRole('button', { name: 'Cancel' }).isVisible()).toBe(false);
    const ended = (await app.inject({ url: `/api/jobs/${job.id}` })).json() as { state: string; result: unknown };
    expect(ended.state).toBe('cancelled');
    expect(ended.result).toBeNull();
    expect((await plansStored()).total).toBe(1);
    expect(page.url()).toBe(`${base}/planner`);
    expect(await page.getByRole('button', { name: 'Run the plan' }).isDisabled()).toBe(false);
    await page.screenshot({ path: `${SHOTS}/planner-cancelled.png` });

    // the same plan with a time limit of 1 s: stopped at its limit, said in words, nothing stored
    await page.getByText('Conditions, time limit, name (optional)').click();
    await page.getByLabel('time limit of the job', { exact: true }).fill('1 s');
    await page.getByText('= 1 s').waitFor();
    await page.getByRole('button', { name: 'Run the plan' }).click();
    await page.getByText(/The plan hit its time limit and was stopped: nothing was stored/).waitFor({ timeout: 30_000 });
    const timed = ((await app.inject({ url: '/api/jobs' })).json() as { items: { id: string; state: string; timeLimit: number }[] }).items[0]!;
    expect(timed.state).toBe('timed-out');
    expect(timed.timeLimit).toBe(1);
    expect((await plansStored()).total).toBe(1);
    await page.screenshot({ path: `${SHOTS}/planner-timed-out.png` });
  }, 120_000);

  it('lists the finished plan and loads its request back into the form', async () => {
    const { items } = await plansStored();
    const id = items[0]!.id;
    const table = page.locator('table.plans-table');
    const row = table.locator('tbody tr');
    expect(await row.count()).toBe(1);
    expect(await row.getByRole('link', { name: 'stationary screen of ptj-1um-b09 + catb-0.22-l04' }).getAttribute('href')).toBe(`/plans/${id}`);
    expect(await row.textContent()).toMatch(/ptj-1um-b09 at 0\.1 %.*catb-0\.22-l04 at 0\.05 %/);
    expect((await row.locator('td').nth(2).textContent())?.trim()).toBe('stationary');
    expect((await row.locator('td').nth(4).textContent())?.trim()).toBe('2');
    await page.getByText(`plans 1–1 of 1, newest first`).waitFor();
    await page.locator('table.plans-table').scrollIntoViewIfNeeded();
    await page.screenshot({ path: `${SHOTS}/planner-list.png`, fullPage: true });

    await row.getByRole('button', { name: `Load plan ${id}'s request into the form` }).click();
    await page.getByText(`The form holds the request of plan ${id}`).waitFor();
    expect(page.url()).toBe(`${base}/planner?from=${id}`);
    const row2 = page.getByRole('group', { name: /base species 2: catb-0\.22-l04/ });
    expect(await row2.getByLabel('amount (volume fraction)', { exact: true }).inputValue()).toBe('0.05 %');
    expect(await page.getByRole('radio', { name: /^chosen/ }).isChecked()).toBe(true);
    const pool = page.getByRole('group', { name: 'candidate species' });
    expect(await pool.getByLabel(/ptj-1um-b07/).isChecked()).toBe(true);
    expect(await pool.getByLabel(/ptj-swim-0\.5-s02/).isChecked()).toBe(true);
    expect(await pool.getByLabel(/gox-e1/).isChecked()).toBe(false);
    expect(await page.getByLabel('draws', { exact: true }).inputValue()).toBe('1000');
    expect(await page.getByLabel('seed', { exact: true }).inputValue()).toBe('7');
    await page.screenshot({ path: `${SHOTS}/planner-loaded.png` });
    // the same from the address (a link from elsewhere): /planner?from=<id>
    await page.goto(`${base}/planner?from=${id}`);
    await page.getByText(`The form holds the request of plan ${id}`).waitFor();
    expect(await page.getByRole('group', { name: /base species 2: catb-0\.22-l04/ }).count()).toBe(1);
  }, 60_000);

  it('keeps the request fields the form does not show, names them, and sends them with the new plan', async () => {
    const sent = {
      base: [{ id: 'ptj-1um-b09', volumeFraction: { value: '0.1 %', sd: '0.01 %' } }],
      chemicals: { h2o2: '200 mM' },
      chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' },
      boundary: 'stationary',
      candidates: ['ptj-1um-b07'],
      probabilityAt: ['1e8 /mL'],
      stateMap: { doseRange: ['1e7 /mL', '1e9 /mL'], baseSteps: 5, doseSteps: 5 },
    };
    const job = (await app.inject({ method: 'POST', url: '/api/plans', payload: sent })).json() as { id: string };
    let j = { state: 'queued', result: null as { planId: number } | null };
    while (!['done', 'failed', 'cancelled', 'timed-out'].includes(j.state)) {
      await new Promise((r) => setTimeout(r, 100));
      j = (await app.inject({ url: `/api/jobs/${job.id}` })).json();
    }
    expect(j.state).toBe('done');
    const from = j.result!.planId;
    await page.goto(`${base}/planner?from=${from}`);
    await page.getByText(`The form holds the request of plan ${from}`).waitFor();
    const note = page.locator('.kept');
    expect(await note.textContent()).toMatch(/probabilityAt.*stateMap\.doseRange/);
    const row1 = page.getByRole('group', { name: /base species 1/ });
    expect(await row1.getByLabel('amount (volume fraction)', { exact: true }).inputValue()).toBe('0.1 %');
    expect(await row1.getByLabel('amount (volume fraction): standard uncertainty').inputValue()).toBe('0.01 %');
    expect(await page.getByLabel('Draw a state map').isChecked()).toBe(true);
    await page.getByLabel('base steps').fill('6');
    await page.getByRole('button', { name: 'Run the plan' }).click();
    await page.waitForURL(/\/plans\/\d+$/, { timeout: 60_000 });
    const id = Number(/\/plans\/(\d+)$/.exec(page.url())![1]);
    expect(id).toBeGreaterThan(from);
    const plan = (await app.inject({ url: `/api/plans/${id}` })).json() as { request: Record<string, unknown> };
    expect(plan.request.probabilityAt).toEqual(['1e8 /mL']);
    expect(plan.request.stateMap).toEqual({ doseRange: ['1e7 /mL', '1e9 /mL'], baseSteps: 6, doseSteps: 5 });
    expect(plan.request.base).toEqual(sent.base);
    expect(plan.request.candidates).toEqual(['ptj-1um-b07']);
  }, 90_000);

  it('pages the stored plans, newest first', async () => {
    const quick = { base: [{ id: 'ptj-1um-b09', volumeFraction: '0.1 %' }], chemicals: { h2o2: '200 mM' }, chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' }, boundary: 'stationary', candidates: ['ptj-1um-b07'] };
    for (let i = 0; i < 9; i++) {
      const job = (await app.inject({ method: 'POST', url: '/api/plans', payload: { ...quick, name: `quick plan ${i + 1}` } })).json() as { id: string };
      for (let state = ''; !['done', 'failed'].includes(state); ) {
        await new Promise((r) => setTimeout(r, 50));
        state = ((await app.inject({ url: `/api/jobs/${job.id}` })).json() as { state: string }).state;
      }
    }
    const total = (await plansStored()).total;
    expect(total).toBe(12);
    await page.goto(`${base}/planner`);
    await page.getByText(`plans 1–10 of ${total}, newest first`).waitFor();
    const names = async () => page.locator('table.plans-table tbody tr td:first-child a').allTextContents();
    expect((await names())[0]).toBe('quick plan 9');
    expect(await page.getByRole('button', { name: '← Newer' }).isDisabled()).toBe(true);
    await page.getByRole('button', { name: 'Older →' }).click();
    await page.getByText(`plans 11–12 of ${total}, newest first`).waitFor();
    expect(await names()).toEqual(['stationary screen of ptj-1um-b09', 'stationary screen of ptj-1um-b09 + catb-0.22-l04']); // plans 2 and 1
    expect(await page.getByRole('button', { name: 'Older →' }).isDisabled()).toBe(true);
    await page.getByRole('button', { name: '← Newer' }).click();
    await page.getByText(`plans 1–10 of ${total}, newest first`).waitFor();
  }, 90_000);

  it('a plan that fails says why beside the field, and stores nothing', async () => {
    await page.goto(`${base}/planner`);
    await page.getByRole('group', { name: /chemical level: h2o2/ }).getByText('= 200 mM').waitFor();
    const pool = page.getByRole('group', { name: 'candidate species' });
    await pool.getByLabel(/ptj-1um-b07/).check();
    await page.getByLabel('draws', { exact: true }).fill('0');
    await page.getByText('State map, fuel sweep (optional)').click();
    await page.getByLabel('Draw a state map').check();
    await page.getByLabel('candidate', { exact: true }).focus();
    await page.getByLabel('candidate', { exact: true }).selectOption('ptj-1um-b07');
    // the map's candidate stops being a candidate
    await pool.getByLabel(/ptj-1um-b07/).uncheck();
    await pool.getByLabel(/ptj-swim-0\.5-s02/).check();
    const before = (await plansStored()).total;
    await page.getByRole('button', { name: 'Run the plan' }).click();
    const mapField = page.locator('.field.has-problem', { has: page.getByLabel('candidate', { exact: true }) });
    await mapField.locator('.problem').waitFor({ timeout: 30_000 });
    expect(await mapField.locator('.problem').textContent()).toMatch(/ptj-1um-b07/);
    expect(await page.locator('#messages').textContent()).toMatch(/nothing was stored|refused/);
    expect((await plansStored()).total).toBe(before);
    await page.getByLabel('candidate', { exact: true }).scrollIntoViewIfNeeded();
    await page.screenshot({ path: `${SHOTS}/planner-failed.png` });
  }, 60_000);

  it('saw no console error, page error or unexpected failed request', () => {
    expect(problems).toEqual([]);
  });
});
