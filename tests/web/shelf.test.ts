/// <reference lib="dom" />
/**
 * The Shelf pages in Debian's Chromium (playwright-core), against the demo shelf on 127.0.0.1:
 * the list (bench units, search, filters, empty shelf, import with a conflict and overwrite), and an
 * item's page (create a species with units, an uncertainty and a coupling; edit it and read the
 * revision's differences; a stale save answered by the shelf's values beside the form's; a refused
 * value shown at its field; retire and restore; apply a stored measurement; a chemical's hazards).
 * Console errors and page errors are collected: there must be none. Screenshots go to screenshots/.
 */
import { mkdirSync, readFileSync } from 'node:fs';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { startBrowserApp } from '../helpers/browser.js';
import { freshApp } from '../helpers/app.js';
import { recordDiff } from '../../web/src/pages/shelf-logic.js';

const SHOTS = 'screenshots';

async function watched(browser: Browser): Promise<{ page: Page; problems: string[] }> {
  const page = await browser.newPage({ viewport: { width: 1280, height: 800 } });
  const problems: string[] = [];
  // a refused request (the 409 and 400 provoked here) is logged by the browser as "Failed to load
  // resource": that is the test's doing, not the page's; any other console error is the page's
  page.on('console', (m) => {
    if (m.type() === 'error' && !m.text().startsWith('Failed to load resource')) problems.push(`console: ${m.text()}`);
  });
  page.on('pageerror', (e) => problems.push(`page error: ${e.message}`));
  // a content-security-policy violation is reported as a console error too; this catches it by name
  // (added through the browser's debugging protocol, so the policy does not apply to this script)
  await page.addInitScript(() => document.addEventListener('securitypolicyviolation', (e) => console.error(`CSP: ${e.violatedDirective} blocked ${e.blockedURI || '(inline)'}`)));
  return { page, problems };
}

describe('the Shelf pages', () => {
  let app: App;
  let browser: Browser;
  let base = '';
  beforeAll(async () => {
    mkdirSync(SHOTS, { recursive: true });
    ({ app, browser, base } = await startBrowserApp());
  }, 60_000);
  afterAll(async () => {
    await browser?.close();
    await app?.close();
  });

  it('lists the demo shelf in bench units; search and filters narrow it', async () => {
    const { page, problems } = await watched(browser);
    await page.goto(`${base}/`);
    await page.waitForSelector('#species tbody tr');
    const speciesText = await page.textContent('#species');
    expect(speciesText).toContain('Pt Janus 1 um, batch TS-PtJ-1.0-B07');
    // the demo's 0.22 ± 0.02 um^2/s shown in µm²/s with its sd; its peroxide mobility 50 ± 10 um^2/(s*mM)
    expect(speciesText).toContain('0.22 ± 0.02 µm²/s');
    expect(speciesText).toContain('50 ± 10 µm²/(s·mM)');
    expect(await page.locator('#species tbody tr').count()).toBe(8);
    expect(await page.locator('#chemicals tbody tr').count()).toBe(3);
    await page.screenshot({ path: `${SHOTS}/shelf-list.png`, fullPage: true });

    await page.fill('#q', 'janus');
    await page.waitForFunction(() => document.querySelectorAll('#species tbody tr').length === 3);
    await page.fill('#q', '');
    await page.waitForFunction(() => document.querySelectorAll('#species tbody tr').length === 8);
    await page.selectOption('#kind', 'enzyme');
    await page.waitForFunction(() => document.querySelectorAll('#species tbody tr').length === 2);
    expect(await page.textContent('#species')).toContain('catalase-e3');
    await page.selectOption('#kind', '');
    // species coupled to glucose: those that act on it or move in it
    await page.selectOption('#couples', 'glucose');
    await page.waitForFunction(() => !document.querySelector('#species')?.textContent?.includes('ptj-1um-b07'));
    const glucose = await page.locator('#species tbody tr').allTextContents();
    expect(glucose.length).toBeGreaterThan(0);
    for (const row of glucose) expect(row).toContain('glucose');
    await page.screenshot({ path: `${SHOTS}/shelf-filtered.png`, fullPage: true });
    expect(problems).toEqual([]);
    await page.close();
  }, 60_000);

  it('an empty shelf says what to do first', async () => {
    const empty = await freshApp();
    await empty.listen({ port: 0, host: '127.0.0.1' });
    try {
      const addr = empty.server.address();
      const { page, problems } = await watched(browser);
      await page.goto(`http://127.0.0.1:${typeof addr === 'object' && addr ? addr.port : 0}/`);
      await page.waitForSelector('#empty-shelf');
      const text = await page.textContent('#empty-shelf');
      expect(text).toContain('add a chemical');
      expect(text).toContain('import');
      await page.screenshot({ path: `${SHOTS}/shelf-empty.png` });
      // a new species on an empty shelf says the chemicals come first
      await page.click('#new-species');
      await page.waitForSelector('#item-form');
      expect(await page.textContent('#form-box')).toContain('Add the chemicals first');
      expect(problems).toEqual([]);
      await page.close();
    } finally {
      await empty.close();
    }
  }, 60_000);

  it('creates a species with units, an uncertainty and a coupling; edits it; a stale save shows both sides; retire and restore', async () => {
    const { page, problems } = await watched(browser);
    await page.goto(`${base}/shelf/new?kind=species`);
    await page.waitForSelector('#item-form');
    await page.fill('input[name="id"]', 'tarn-bead-7');
    await page.fill('input[name="name"]', 'Silica bead 2 um, batch T7 (invented)');
    await page.fill('input[name="diffusivity"]', '0.3 um^2/s');
    await page.getByLabel('Diffusivity: standard uncertainty').fill('0.03 um^2/s');
    // the inline reading: the display text and the SI value (0.3 µm²/s = 3e-13 m²/s)
    const dOut = page.locator('.coef[data-key="diffusivity"] output');
    await expect.poll(() => dOut.textContent()).toContain('0.3 ± 0.03 µm²/s');
    expect(await dOut.textContent()).toContain('SI 3 × 10⁻¹³ m^2/s ± 3 × 10⁻¹⁴');
    await page.fill('input[name="radius"]', '1 uu');
    await expect.poll(() => page.locator('.coef[data-key="radius"] output').getAttribute('class')).toContain('error');
    await page.fill('input[name="radius"]', '1 um');
    await page.click('#add-coupling');
    const row = page.locator('fieldset.coupling').first();
    await row.locator('select').first().selectOption('h2o2');
    await row.getByLabel('Activity', { exact: true }).selectOption('constant');
    await row.getByLabel('Activity per particle', { exact: true }).fill('-1e-16 mol/s');
    await row.getByLabel('Mobility', { exact: true }).fill('20 um^2/(s*mM)');
    await row.getByLabel('Mobility: standard uncertainty').fill('5 um^2/(s*mM)');
    await expect.poll(() => row.locator('.coef').last().locator('output').textContent()).toContain('20 ± 5 µm²/(s·mM)');
    await page.screenshot({ path: `${SHOTS}/item-new.png`, fullPage: true });
    await page.click('#save');
    await page.waitForURL(/\/shelf\/species\/tarn-bead-7/);
    await page.waitForSelector('#history li');
    expect(await page.textContent('#messages')).toContain('revision 1');

    const stored = (await app.inject({ method: 'GET', url: '/api/species/tarn-bead-7' })).json();
    expect(stored.record.diffusivity.si).toBeCloseTo(3e-13, 25);
    expect(stored.record.diffusivity.sd).toBeCloseTo(3e-14, 26);
    expect(stored.record.couplings).toHaveLength(1);
    expect(stored.record.couplings[0].chemical).toBe('h2o2');
    expect(stored.record.couplings[0].activity.si).toBeCloseTo(-1e-16, 28);
    // 20 um^2/(s*mM) = 20e-12 m^2/s per mol/m^3 = 2e-11 m^5/(mol*s)
    expect(stored.record.couplings[0].mobility.si).toBeCloseTo(2e-11, 22);

    // edit: a new revision whose history row shows the old and the new diffusivity
    await page.fill('input[name="diffusivity"]', '0.35 um^2/s');
    await page.fill('input[name="note"]', 'refit on the new tracks');
    await page.click('#save');
    await page.waitForSelector('#history li[data-revision="2"]');
    const rev2 = await page.textContent('#history li[data-revision="2"]');
    expect(rev2).toContain('refit on the new tracks');
    const cells = await page.locator('#history li[data-revision="2"] table.diff tbody tr').first().locator('td').allTextContents();
    expect(cells).toEqual(['diffusivity', '0.3 µm²/s ± 0.03 µm²/s', '0.35 µm²/s ± 0.03 µm²/s']);
    expect(rev2).not.toContain('radius');
    await page.locator('#history').scrollIntoViewIfNeeded();
    await page.screenshot({ path: `${SHOTS}/item-history.png`, fullPage: true });

    // someone else changes it through the API; this form is now stale
    const other = (await app.inject({ method: 'GET', url: '/api/species/tarn-bead-7' })).json();
    const theirs = await app.inject({ method: 'PUT', url: '/api/species/tarn-bead-7', payload: { baseRevision: other.revision, record: { ...other.typed, radius: '1.2 um' }, author: 'a colleague (invented)', note: 'remeasured by DLS' } });
    expect(theirs.statusCode).toBe(200);
    await page.fill('input[name="name"]', 'Silica bead 2 um, batch T7b (invented)');
    await page.click('#save');
    await page.waitForSelector('#side-by-side');
    const rows = page.locator('#side-by-side tbody tr');
    expect(await rows.count()).toBe(2);
    const side = await Promise.all([0, 1].map((i) => rows.nth(i).locator('td').allTextContents()));
    // field, on the shelf now, yours, when you opened it, changed by
    expect(side).toContainEqual(['radius', '1.2 µm', '1 µm', '1 µm', 'a colleague (invented) (since you opened it)']);
    expect(side).toContainEqual(['name', 'Silica bead 2 um, batch T7 (invented)', 'Silica bead 2 um, batch T7b (invented)', 'Silica bead 2 um, batch T7 (invented)', 'you']);
    expect(await page.textContent('#conflict')).toContain('revision 3 by a colleague (invented)');
    await page.locator('#conflict').scrollIntoViewIfNeeded();
    await page.screenshot({ path: `${SHOTS}/item-conflict.png` });
    // re-apply mine on top of revision 3
    await page.click('#conflict-reapply');
    await page.waitForSelector('#history li[data-revision="4"]');
    const after = (await app.inject({ method: 'GET', url: '/api/species/tarn-bead-7' })).json();
    expect(after.revision).toBe(4);
    expect(after.name).toBe('Silica bead 2 um, batch T7b (invented)');
    expect(after.record.radius.input).toBe('1 um');

    // a value the shelf refuses: the problem is shown at its field, in words
    await page.fill('input[name="diffusivity"]', '0.3 um');
    await page.click('#save');
    await page.waitForSelector('.coef[data-key="diffusivity"] .problem');
    expect(await page.textContent('.coef[data-key="diffusivity"] .problem')).toBe('this needs a diffusivity (area per time, such as µm²/s); "0.3 um" is a length (such as µm or nm)');
    expect((await app.inject({ method: 'GET', url: '/api/species/tarn-bead-7' })).json().revision).toBe(4);
    await page.screenshot({ path: `${SHOTS}/item-problem.png` });

    // retire (with a note), then restore
    await page.goto(`${base}/shelf/species/tarn-bead-7`);
    await page.waitForSelector('#retire');
    await page.getByLabel('Note on retiring').fill('batch used up');
    await page.click('#retire');
    await page.waitForSelector('#restore');
    let now = (await app.inject({ method: 'GET', url: '/api/species/tarn-bead-7' })).json();
    expect(now.retired).toBe(true);
    expect(now.note).toBe('batch used up');
    expect(await page.textContent('#history li[data-revision="5"]')).toContain('in use');
    // the list hides it, unless asked to show retired items (then marked retired)
    await page.goto(`${base}/`);
    await page.waitForSelector('#species tbody tr');
    expect(await page.textContent('#species')).not.toContain('tarn-bead-7');
    await page.check('#retired');
    await page.waitForFunction(() => document.querySelector('#species')?.textContent?.includes('tarn-bead-7'));
    expect(await page.locator('#species tr.is-retired').allTextContents()).toEqual([expect.stringContaining('retired')]);
    await page.screenshot({ path: `${SHOTS}/shelf-retired.png`, fullPage: true });
    await page.click('a[href="/shelf/species/tarn-bead-7"]');
    await page.waitForSelector('#restore');
    await page.click('#restore');
    await page.waitForSelector('#retire');
    now = (await app.inject({ method: 'GET', url: '/api/species/tarn-bead-7' })).json();
    expect(now.retired).toBe(false);
    expect(now.revision).toBe(6);
    expect(problems).toEqual([]);
    await page.close();
  }, 120_000);

  it('applies a stored measurement; a chemical shows its hazard bands and the cautions', async () => {
    const { page, problems } = await watched(browser);
    const csv = 'lag [s],msd [um^2]\n0.1,0.092\n0.2,0.175\n0.5,0.44\n1,0.90\n2,1.77\n5,4.41\n';
    const m = await app.inject({ method: 'POST', url: '/api/species/ptj-1um-b09/measurements', payload: { method: 'msd', data: csv, fileName: 'tracks-b09.csv', author: 'a student (invented)' } });
    expect(m.statusCode).toBe(201);
    const before = (await app.inject({ method: 'GET', url: '/api/species/ptj-1um-b09' })).json();
    await page.goto(`${base}/shelf/species/ptj-1um-b09`);
    await page.waitForSelector('.apply-measurement');
    expect(await page.textContent('#measurements')).toContain('tracks-b09.csv');
    expect(await page.getAttribute('#calibrate-link', 'href')).toBe('/calibrate?species=ptj-1um-b09');
    await page.click('.apply-measurement');
    await page.waitForFunction(() => /Applied measurement \d+/.test(document.getElementById('messages')?.textContent ?? ''));
    const afterApply = (await app.inject({ method: 'GET', url: '/api/species/ptj-1um-b09' })).json();
    expect(afterApply.revision).toBe(before.revision + 1);
    expect(afterApply.record.diffusivity.provenance.measurement).toBe(m.json().id);
    await page.locator('#measurements').scrollIntoViewIfNeeded();
    await page.screenshot({ path: `${SHOTS}/item-measurement.png`, fullPage: true });

    await page.goto(`${base}/shelf/chemicals/h2o2`);
    await page.waitForSelector('#hazards table.bands');
    const hz = await page.textContent('#hazards');
    expect(hz).toContain('H271');
    expect(hz).toContain('safety data sheet take precedence');
    // the species that use peroxide, linked; catalase makes oxygen from it
    expect(await page.textContent('#used-by')).toContain('catalase-e3');
    expect(await page.getAttribute('#used-by a[href="/shelf/species/catalase-e3"]', 'href')).toBe('/shelf/species/catalase-e3');
    await page.screenshot({ path: `${SHOTS}/item-chemical.png`, fullPage: true });
    // a chemical without hazard data says so, never "no hazard"; bands are added through the hazards API
    // (an invented test solute: the band is input to the editor, not a statement about a real chemical)
    const made = await app.inject({ method: 'POST', url: '/api/chemicals', payload: { record: { id: 'tarn-solute-x', name: 'test solute X (invented)', diffusivity: '1e-9 m^2/s' } } });
    expect(made.statusCode).toBe(201);
    await page.goto(`${base}/shelf/chemicals/tarn-solute-x`);
    await page.waitForSelector('#no-hazard-data');
    expect(await page.textContent('#no-hazard-data')).toContain('not classified');
    expect(await page.textContent('#no-hazard-data')).not.toMatch(/no hazard\b(?! data)/i);
    await page.click('#edit-hazards');
    const form = page.locator('form.hazard-form');
    await form.getByLabel('Source of these data').fill('test input (invented)');
    await form.getByRole('button', { name: 'Add a band' }).click();
    await form.getByLabel('From (% w/w, inclusive)').fill('20');
    await form.getByLabel('Below (% w/w)').fill('10');
    await form.getByLabel('Hazard statement').fill('H319');
    await form.getByLabel('Statement text').fill('Causes serious eye irritation.');
    await form.getByLabel('Class and category').fill('Eye Irrit. 2');
    await form.getByLabel('Pictograms').fill('GHS07');
    await form.getByLabel('Signal word').selectOption('Warning');
    await form.getByRole('button', { name: 'Save the hazard data' }).click();
    // max below min: refused, said at the band
    await form.locator('.hazard-band .problem').waitFor();
    expect(await form.locator('.hazard-band .problem').textContent()).toContain('max must be above min');
    await form.getByLabel('Below (% w/w)').fill('');
    await form.getByRole('button', { name: 'Save the hazard data' }).click();
    await page.waitForSelector('#hazards table.bands');
    const saved = (await app.inject({ method: 'GET', url: '/api/chemicals/tarn-solute-x/hazards' })).json();
    expect(saved.current.version).toBe(1);
    expect(saved.current.body.bands).toEqual([{ min: 0.2, max: null, statement: 'H319', text: 'Causes serious eye irritation.', hazardClass: 'Eye Irrit. 2', pictograms: ['GHS07'], signal: 'Warning', precautionary: [] }]);
    expect(await page.textContent('#hazards table.bands')).toContain('from 20 %');

    // the editor keeps every band as it was: a chemical's (h2o2) and a species' by form (gox-e1), saved unchanged
    for (const path of ['chemicals/h2o2', 'species/gox-e1']) {
      const before = (await app.inject({ method: 'GET', url: `/api/${path}/hazards` })).json();
      await page.goto(`${base}/shelf/${path}`);
      await page.click('#edit-hazards');
      if (path.startsWith('species')) {
        await page.locator('form.hazard-form').scrollIntoViewIfNeeded();
        await page.screenshot({ path: `${SHOTS}/item-hazard-editor.png` });
      }
      await page.locator('form.hazard-form').getByRole('button', { name: 'Save the hazard data' }).click();
      await page.waitForFunction(() => /Hazard data saved/.test(document.getElementById('messages')?.textContent ?? ''));
      const after = (await app.inject({ method: 'GET', url: `/api/${path}/hazards` })).json();
      expect(after.current.version, path).toBe(before.current.version + 1);
      expect(after.current.body, path).toEqual(before.current.body);
    }
    expect(await page.textContent('#hazards')).toContain('These data cover');
    expect(problems).toEqual([]);
    await page.close();
  }, 60_000);

  it('the form keeps every value of every demo item: saving one unchanged changes no field', async () => {
    const { page, problems } = await watched(browser);
    for (const [kind, path] of [
      ['species', '/api/species'],
      ['chemicals', '/api/chemicals'],
    ] as const) {
      const { items } = (await app.inject({ method: 'GET', url: `${path}?limit=500` })).json() as { items: { id: string; revision: number; record: unknown }[] };
      for (const it of items) {
        await page.goto(`${base}/shelf/${kind}/${it.id}`);
        await page.waitForSelector('#history li');
        // unchanged and without a note: the page itself finds nothing changed and writes nothing
        await page.click('#save');
        await page.waitForFunction(() => /Nothing to save/.test(document.getElementById('messages')?.textContent ?? ''));
        expect((await app.inject({ method: 'GET', url: `${path}/${it.id}` })).json().revision, it.id).toBe(it.revision);
        // with a note, the service writes the revision: its record must be the same
        await page.fill('input[name="note"]', 'checked, no change');
        await page.click('#save');
        await page.waitForFunction(() => /Saved as revision/.test(document.getElementById('messages')?.textContent ?? ''));
        const now = (await app.inject({ method: 'GET', url: `${path}/${it.id}` })).json();
        expect(now.revision, it.id).toBe(it.revision + 1);
        expect(recordDiff(it.record, now.record, kind === 'species' ? 'species' : 'chemical'), it.id).toEqual([]);
        expect(now.record, it.id).toEqual(it.record);
      }
    }
    expect(problems).toEqual([]);
    await page.close();
  }, 120_000);

  it('imports a file; a conflict is explained per entry and can be overwritten', async () => {
    const { page, problems } = await watched(browser);
    const doc = (await app.inject({ method: 'GET', url: '/api/shelf/export' })).json();
    // the shelf moves on after the export …
    const cur = (await app.inject({ method: 'GET', url: '/api/chemicals/glucose' })).json();
    expect((await app.inject({ method: 'PUT', url: '/api/chemicals/glucose', payload: { baseRevision: cur.revision, record: { ...cur.typed, notes: 'checked again' } } })).statusCode).toBe(200);
    // … and the file changes the same item
    const entry = doc.chemicals.find((c: { id: string }) => c.id === 'glucose');
    entry.name = 'D-glucose (anhydrous)';
    await page.goto(`${base}/`);
    await page.waitForSelector('#species tbody tr');
    // export: a brink-shelf file with every item
    const [dl] = await Promise.all([page.waitForEvent('download'), page.click('#export')]);
    expect(dl.suggestedFilename()).toMatch(/^brink-shelf-\d{4}-\d{2}-\d{2}\.json$/);
    const exported = JSON.parse(readFileSync(await dl.path(), 'utf8'));
    expect(exported.format).toBe('brink-shelf');
    expect(exported.species.map((x: { id: string }) => x.id)).toContain('ptj-1um-b07');
    // a file that is not a shelf: nothing written, the problems listed
    await page.setInputFiles('#import-file', { name: 'notes.json', mimeType: 'application/json', buffer: Buffer.from(JSON.stringify({ format: 'something else' })) });
    await page.waitForSelector('#import-result .msg.error');
    expect(await page.textContent('#import-result')).toContain('Nothing was imported');
    await page.setInputFiles('#import-file', { name: 'shelf-export.json', mimeType: 'application/json', buffer: Buffer.from(JSON.stringify(doc)) });
    await page.waitForSelector('#import-conflicts');
    const words = await page.textContent('#import-conflicts');
    expect(words).toContain('Chemical “glucose”');
    expect(words).toContain(`exported at revision ${cur.revision}`);
    expect((await app.inject({ method: 'GET', url: '/api/chemicals/glucose' })).json().name).toBe('D-glucose');
    await page.screenshot({ path: `${SHOTS}/shelf-import-conflict.png`, fullPage: true });
    await page.click('#import-overwrite');
    await page.waitForSelector('#import-done');
    expect(await page.textContent('#import-done')).toMatch(/1 over newer edits/);
    expect((await app.inject({ method: 'GET', url: '/api/chemicals/glucose' })).json().name).toBe('D-glucose (anhydrous)');
    await page.waitForFunction(() => document.querySelector('#chemicals')?.textContent?.includes('D-glucose (anhydrous)'));
    expect(problems).toEqual([]);
    await page.close();
  }, 60_000);
});
