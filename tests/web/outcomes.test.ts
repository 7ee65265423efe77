/// <reference lib="dom" />
/**
 * The Outcomes page in a real browser (Debian's Chromium via playwright-core), on the README's loop plan
 * (seeds/plans/washed-b09-b07.json, created through the API): the tubes entered against the sheet's own codes
 * (the codes the service's JSON sheet lists), a refused row shown under that row in words, the dose–response
 * plot, the update run as a job, applied to the shelf (the species' revision moves, checked through the API),
 * a second apply refused because the shelf moved (in words), and the next series with a link to its plan.
 * The bench pattern is invented: low doses stable, the four highest doses clustered (as the seed CSV has it).
 */
import { mkdirSync, readFileSync } from 'node:fs';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { startBrowserApp } from '../helpers/browser.js';
import { postPlan } from '../helpers/plans.js';

let app: App;
let browser: Browser;
let base = '';
let planId = 0;
let lids: string[] = [];

beforeAll(async () => {
  ({ app, browser, base } = await startBrowserApp());
  const r = await postPlan(app, JSON.parse(readFileSync('seeds/plans/washed-b09-b07.json', 'utf8')));
  expect(r.statusCode).toBe(201);
  planId = (r.json() as { id: number }).id;
  const sheet = await app.inject({ method: 'GET', url: `/api/plans/${planId}/sheet?format=json` });
  lids = (sheet.json() as { tubes: { tubes: string[] }[] }).tubes.flatMap((t) => t.tubes);
  mkdirSync('screenshots', { recursive: true });
}, 120_000);

afterAll(async () => {
  await browser?.close();
  await app?.close();
});

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

/** Low doses stable, D5–D8 clustered (stationary), the controls stable. */
const pattern = (lid: string) => (/^D[5-8]/.test(lid) ? 'stationary' : 'stable');

const revisionOf = async (id: string) => ((await app.inject({ method: 'GET', url: `/api/species/${id}` })).json() as { revision: number }).revision;

describe('the Outcomes page', () => {
  it('refuses a row that cannot be right, in words under that row', async () => {
    const { page, errors } = await open(`${base}/plans/${planId}/outcomes`);
    await page.waitForSelector('#tubes tbody tr');
    await page.selectOption('select[name="state-D5a"]', 'stable');
    await page.fill('input[name="onset-D5a"]', '12 min');
    await page.click('#save');
    await page.waitForSelector('tr.problem[data-problem-for="D5a"]');
    expect(await page.textContent('tr.problem[data-problem-for="D5a"]')).toMatch(/D5a: tube D5a is entered as stable but with an onset time: a stable tube shows no pattern/);
    expect(await page.getAttribute('input[name="onset-D5a"]', 'aria-invalid')).toBe('true');
    expect(await page.textContent('#messages')).toMatch(/Not saved: 1 problem/);
    await page.screenshot({ path: 'screenshots/outcomes-row-problem.png' });
    // nothing was stored
    expect(((await app.inject({ method: 'GET', url: `/api/plans/${planId}/outcomes` })).json() as { current: unknown }).current).toBeNull();
    // the refused request (400) shows in the console as a failed resource load; nothing else may
    expect(errors.filter((e) => !/status of 400/.test(e))).toEqual([]);
    await page.close();
  }, 60_000);

  it('enters the tubes against the sheet codes, saves, draws the dose–response, updates, applies, designs the next series', async () => {
    const { page, errors } = await open(`${base}/plans/${planId}/outcomes`);
    await page.waitForSelector('#tubes tbody tr');
    expect(await page.$$eval('#tubes tbody tr', (trs) => trs.map((tr) => tr.getAttribute('data-tube')))).toEqual(lids);
    expect(lids).toHaveLength(33);
    // before any outcome: the empty states say what to do first
    expect(await page.textContent('#dose-response')).toMatch(/Enter and save what the tubes did/);
    expect(await page.isDisabled('#run-update')).toBe(true);
    for (const lid of lids) await page.selectOption(`select[name="state-${lid}"]`, pattern(lid));
    await page.fill('input[name="notes-D5a"]', 'clusters at the walls');
    await page.fill('input[name="onset-D6a"]', '12 min');
    await page.fill('input[name="length-D6a"]', '0.4 mm');
    await page.fill('input[name="author"]', 'a technician (invented)');
    await page.screenshot({ path: 'screenshots/outcomes-entry.png' });
    await page.click('#save');
    await page.waitForSelector('#saved');
    expect(await page.textContent('#saved')).toMatch(/Saved as revision 1: 33 tubes recorded/);
    const stored = (await app.inject({ method: 'GET', url: `/api/plans/${planId}/outcomes` })).json() as { current: { revision: number; author: string; tubes: { tube: string; state: string; onsetTime: number | null; patternLength: number | null }[] } };
    expect(stored.current.revision).toBe(1);
    expect(stored.current.author).toBe('a technician (invented)');
    expect(stored.current.tubes.map((t) => [t.tube, t.state])).toEqual(lids.map((l) => [l, pattern(l)]));
    // "12 min" and "0.4 mm" as SI: 720 s and 4e-4 m
    expect(stored.current.tubes.find((t) => t.tube === 'D6a')).toMatchObject({ onsetTime: 720, patternLength: 4e-4 });

    // the dose–response: a plot with labelled axes (units), the points, the words
    await page.waitForSelector('#dose-response figure svg');
    const axisText = await page.$eval('#dose-response figure svg', (svg) => svg.textContent ?? '');
    expect(axisText).toContain('dopant dose delivered (particles/mL, log scale)');
    expect(axisText).toContain('fraction of tubes that crossed (0–1)');
    expect(axisText).toContain('3/3');
    expect(axisText).toContain('0/3');
    expect(await page.textContent('#dr-words')).toMatch(/the response switches between 1\.43 × 10⁸ particles\/mL \(\d+ µg\/mL\) and 1\.79 × 10⁸ particles\/mL \(\d+ µg\/mL\)/);
    expect(await page.textContent('#dr-words')).toMatch(/Dose 0 \(no dopant: C0a, C0b, C0c\): 0 of 3 crossed/);
    await page.locator('#dose-response').screenshot({ path: 'screenshots/outcomes-dose-response.png' });

    // the update, as a job
    const before = await revisionOf('ptj-1um-b07');
    await page.click('#run-update');
    await page.waitForSelector('#consistency', { timeout: 110_000 });
    expect(await page.textContent('#consistency')).toMatch(/^Consistent: the outcomes are consistent with the model/);
    expect(await page.textContent('#band-update')).toMatch(/Threshold band of ptj-1um-b07 .* before → .* after the outcomes/);
    expect(await page.textContent('#coefficients')).toMatch(/species ptj-1um-b07: mobility on h2o2/);
    expect(await page.textContent('#coefficients')).toMatch(/µm²\/\(s·mM\)/);
    // what the tubes cannot tell (o2: made, moved in by nobody) is not in the table but listed with the reason (docs/model.md §13)
    expect(await page.textContent('#coefficients')).not.toMatch(/on o2/);
    expect(await page.textContent('#unaffected')).toMatch(/chemical o2: diffusivity: no species in the tubes moves in o2/);
    await page.locator('#dose-response figure').screenshot({ path: 'screenshots/outcomes-dose-response-updated.png' });
    await page.locator('#update').scrollIntoViewIfNeeded();
    await page.screenshot({ path: 'screenshots/outcomes-update.png' });

    // apply: the species' revision moves on the shelf
    await page.fill('input[name="apply-author"]', 'a student (invented)');
    await page.click('#apply');
    await page.waitForSelector('#applied');
    const after = await revisionOf('ptj-1um-b07');
    expect(after).toBe(before + 1);
    expect(await page.textContent('#applied-changes')).toMatch(/species ptj-1um-b07\s*mobility on h2o2/);
    await page.locator('#apply-result').scrollIntoViewIfNeeded();
    await page.screenshot({ path: 'screenshots/outcomes-applied.png' });

    // the next series: a job that stores a new plan, linked
    await page.fill('input[name="next-tubes"]', '6');
    await page.click('#run-next');
    await page.waitForSelector('#next-plan', { timeout: 110_000 });
    expect(await page.textContent('#next-doses')).toMatch(/^6 doses designed: /);
    const href = await page.getAttribute('#next-plan', 'href');
    const next = Number(/^\/plans\/(\d+)$/.exec(href ?? '')?.[1]);
    expect(next).toBeGreaterThan(planId);
    const nextPlan = (await app.inject({ method: 'GET', url: `/api/plans/${next}` })).json() as { rerunOf: number | null };
    expect(nextPlan.rerunOf).toBe(planId);
    await page.locator('#next').scrollIntoViewIfNeeded();
    await page.screenshot({ path: 'screenshots/outcomes-next.png' });
    expect(errors).toEqual([]);
    await page.close();
  }, 240_000);

  it('a reload shows the saved outcomes; a second apply is refused in words because the shelf moved', async () => {
    const { page, errors } = await open(`${base}/plans/${planId}/outcomes`);
    await page.waitForSelector('#tubes tbody tr');
    expect(await page.inputValue('select[name="state-D7b"]')).toBe('stationary');
    expect(await page.inputValue('input[name="onset-D6a"]')).toBe('12 min');
    expect(await page.textContent('#save')).toBe('Save as revision 2');
    await page.click('#run-update');
    await page.waitForSelector('#apply', { timeout: 110_000 });
    const revision = await revisionOf('ptj-1um-b07');
    await page.click('#apply');
    await page.waitForSelector('#apply-refused');
    expect(await page.textContent('#apply-refused')).toMatch(/Not applied: the shelf moved since this plan was computed\..*nothing was written.*Rerun the plan on today’s shelf/s);
    expect(await revisionOf('ptj-1um-b07')).toBe(revision);
    await page.locator('#apply-result').scrollIntoViewIfNeeded();
    await page.screenshot({ path: 'screenshots/outcomes-refused.png' });
    // the refusal (409) shows in the console as a failed resource load; nothing else may
    expect(errors.filter((e) => !/status of 409/.test(e))).toEqual([]);
    await page.close();
  }, 240_000);
});
