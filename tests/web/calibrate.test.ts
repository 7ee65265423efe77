/// <reference lib="dom" />
/**
 * The Calibrate page in a real browser (Debian's Chromium via playwright-core, the service on 127.0.0.1):
 * paste the invented demo MSD of the silica tracer (seeds/calibration/), fit, see the plots with labelled
 * axes and the parameters, store, apply, and check through the API that the species' diffusivity is the
 * fitted value and that the stored data are the data fitted. A failing fit shows the error and no stale
 * result. The numbers are the API's own (the fits are checked against their sources in tests/calibrate/
 * and tests/engine/fit/): this test checks that the page shows and stores what the API computes.
 * Screenshots go to screenshots/calibrate-*.png.
 */
import { mkdirSync, readFileSync } from 'node:fs';
import type { Browser, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { App } from '../../server/http/app.js';
import { startBrowserApp } from '../helpers/browser.js';

const root = new URL('../../', import.meta.url).pathname;
const shots = `${root}screenshots`;
const msdCsv = readFileSync(`${root}seeds/calibration/silica-1um-t01-msd.csv`, 'utf8');

let app: App;
let browser: Browser;
let base = '';

beforeAll(async () => {
  mkdirSync(shots, { recursive: true });
  ({ app, browser, base } = await startBrowserApp());
}, 60_000);

afterAll(async () => {
  await browser?.close();
  await app?.close();
});

/** A page that records console errors, page errors and content-security-policy violations. */
async function open(path: string): Promise<{ page: Page; errors: string[] }> {
  const page = await browser.newPage({ viewport: { width: 1280, height: 800 } });
  const errors: string[] = [];
  page.on('console', (m) => {
    if (m.type() === 'error') errors.push(m.text());
  });
  page.on('pageerror', (e) => errors.push(e.message));
  // a content-security-policy violation is reported to the page too: count it as an error
  await page.exposeFunction('__cspViolation', (text: string) => errors.push(text));
  await page.addInitScript(() => {
    document.addEventListener('securitypolicyviolation', (e) => (window as unknown as { __cspViolation(t: string): void }).__cspViolation(`CSP: ${e.violatedDirective} blocked ${e.blockedURI || '(inline)'}`));
  });
  await page.goto(`${base}${path}`);
  return { page, errors };
}

/** "0.2358 ± 0.0019 µm²/s" → [0.2358, 0.0019]. */
function readValue(text: string): [number, number] {
  const m = /(−?[\d.]+) ± ([\d.]+)/.exec(text);
  if (!m) throw new Error(`no value ± sd in "${text}"`);
  return [Number(m[1]!.replace('−', '-')), Number(m[2])];
}

describe('the Calibrate page', () => {
  it('fits the demo MSD, plots it with labelled axes, stores exactly the data fitted, and applies it to the shelf', async () => {
    const { page, errors } = await open('/calibrate?species=silica-1um-t01');
    await page.waitForFunction(() => (document.getElementById('species') as HTMLSelectElement).value === 'silica-1um-t01');
    // the empty state explains what to do, and no empty plot frame shows
    expect(await page.textContent('#empty')).toMatch(/press Fit/);
    expect(await page.$$('figure')).toHaveLength(0);
    await page.screenshot({ path: `${shots}/calibrate-empty.png`, fullPage: true });

    await page.fill('#data', msdCsv);
    await page.click('#run');
    await page.waitForSelector('#parameters');
    // what the API answers for the same request
    const api = (await app.inject({ method: 'POST', url: '/api/fits/msd', payload: { data: msdCsv, options: { model: 'passive-2d' } } })).json();
    const d = api.parameters.diffusivity as { value: number; sd: number };

    // two plots, each axis labelled with its unit; the MSD spans decades, so log axes
    const svgText = await page.$$eval('figure svg', (svgs) => svgs.map((s) => s.textContent ?? ''));
    expect(svgText).toHaveLength(2);
    expect(svgText[0]).toContain('lag time (s)');
    expect(svgText[0]).toContain('mean-squared displacement (µm²)');
    expect(svgText[1]).toContain('residual (% of the fitted MSD)');
    // error bars from the sd column: one per point
    expect(api.sd).toHaveLength(api.points);
    expect(await page.textContent('figure figcaption')).toMatch(/bars ± 1 sd.*logarithmic axes/);

    // the parameter in bench units, as the API fitted it (to its rounding: the value to the sd's place)
    const row = await page.textContent('#parameters tbody tr:first-child');
    expect(row).toMatch(/diffusivity D/);
    expect(row).toMatch(/µm²\/s/);
    const [shown, shownSd] = readValue(row!);
    expect(shownSd).toBeCloseTo(Number((d.sd / 1e-12).toPrecision(2)), 10);
    expect(Math.abs(shown * 1e-12 - d.value)).toBeLessThanOrEqual(0.05 * shownSd * 1e-12 + 1e-30);
    // the goodness of fit in words (weighted by the sd column: a chi-square) and the fit's warnings
    expect(await page.textContent('#goodness')).toMatch(/Reduced chi-square [\d.]+ \(chi-square [\d.]+ on 8 degrees of freedom/);
    expect(await page.textContent('#fit-notes')).toMatch(/understate the uncertainty/);
    await page.screenshot({ path: `${shots}/calibrate-msd-fit.png`, fullPage: true });

    // the text box changes after the fit: the page says so, and Store keeps the data as fitted
    await page.fill('#data', `${msdCsv}99,1e6,1\n`);
    expect(await page.isVisible('#changed-since')).toBe(true);
    expect(await page.textContent('#store')).toBe('Store as a measurement of plain silica tracer 1 um, batch TS-Si-1.0-T01');
    await page.click('#store');
    await page.waitForSelector('#stored');
    const id = Number(/measurement (\d+)/.exec((await page.textContent('#stored'))!)![1]);
    const stored = (await app.inject({ method: 'GET', url: `/api/measurements/${id}` })).json();
    expect(stored.data).toBe(msdCsv);
    expect(stored.options).toEqual({ model: 'passive-2d' });
    expect(stored.fit.parameters.diffusivity.value).toBe(d.value);

    // the apply preview: old → new, with uncertainties
    const preview = await page.textContent('#apply-table');
    expect(preview).toContain('0.24 ± 0.02 µm²/s');
    expect(preview).toContain(row!.match(/[\d.]+ ± [\d.]+ µm²\/s/)![0]);
    // the fit calls its own ± too small: Apply waits until the user says they know
    expect(await page.isDisabled('#apply-button')).toBe(true);
    await page.check('#accept-understated');
    await page.fill('#apply-author', 'a student (invented)');
    await page.click('#apply-button');
    await page.waitForSelector('#applied');
    expect(await page.textContent('#applied')).toMatch(/now at revision 2 \(was 1\)/);
    expect(await page.getAttribute('#species-link', 'href')).toBe('/shelf/species/silica-1um-t01');
    await page.screenshot({ path: `${shots}/calibrate-applied.png`, fullPage: true });

    // through the API: the species' diffusivity is the fitted value (rounded to its standard error's place)
    const sp = (await app.inject({ method: 'GET', url: '/api/species/silica-1um-t01' })).json();
    expect(sp.revision).toBe(2);
    expect(sp.record.diffusivity.provenance?.measurement ?? sp.typed.diffusivity.provenance?.measurement).toBe(id);
    expect(Math.abs(sp.record.diffusivity.si - d.value)).toBeLessThanOrEqual(0.05 * d.sd);
    expect(sp.record.diffusivity.sd).toBeCloseTo(Number(d.sd.toPrecision(2)), 20);

    expect(errors).toEqual([]);
    // a failing fit: the old result goes, the error shows in words, no numbers and no plot remain
    await page.fill('#data', 'lag [s],msd [um]\n1,2\n2,4\n');
    await page.click('#run');
    await page.waitForSelector('#failed');
    expect(await page.textContent('#messages [role="alert"]')).toMatch(/needs a unit of length\^2|length\^2/);
    expect(await page.$$('#parameters')).toHaveLength(0);
    expect(await page.$$('figure')).toHaveLength(0);
    expect(await page.$$('#store')).toHaveLength(0);
    await page.screenshot({ path: `${shots}/calibrate-error.png`, fullPage: true });
    // Chromium logs the refused request itself (the 400 the bad CSV asked for) on the console: that
    // one network line, and no script error
    expect(errors).toEqual(['Failed to load resource: the server responded with a status of 400 (Bad Request)']);
    await page.close();
  }, 90_000);

  it('fits a quantal dose–response and Stokes–Einstein, and shows what the API answers', async () => {
    // Bliss's beetle data (1935), the published table behind tests/calibrate/ (log10 doses; fitted on the linear scale)
    const beetles = readFileSync(`${root}tests/calibrate/beetles-log10.csv`, 'utf8');
    const { page, errors } = await open('/calibrate');
    await page.selectOption('#method', 'quantal');
    await page.selectOption('#scale', 'linear');
    await page.fill('#data', beetles);
    await page.click('#run');
    await page.waitForSelector('#quantal-data');
    const api = (await app.inject({ method: 'POST', url: '/api/fits/quantal', payload: { data: beetles, options: { link: 'logit', scale: 'linear' } } })).json();
    const rows = await page.$$eval('#quantal-data tbody tr', (trs) => trs.map((tr) => Array.from(tr.querySelectorAll('td'), (td) => td.textContent)));
    expect(rows).toHaveLength(api.data.length);
    expect(rows.map((r) => Number(r[2]))).toEqual(api.data.map((x: { responded: number }) => x.responded));
    const [ed50] = readValue((await page.textContent('#parameters tbody tr:first-child'))!);
    expect(Math.abs(ed50 - api.parameters.ed50.value)).toBeLessThanOrEqual(0.05 * Number(api.parameters.ed50.sd.toPrecision(2)));
    const svg = await page.textContent('figure svg');
    expect(svg).toContain('fraction responded');
    expect(svg).toContain('dose (');
    expect(await page.textContent('#goodness')).toMatch(/Pearson chi-square/);
    await page.screenshot({ path: `${shots}/calibrate-quantal.png`, fullPage: true });

    await page.selectOption('#method', 'stokes-einstein');
    await page.fill('#se-options input[placeholder="e.g. 1 um"]', '1 um');
    await page.click('#run');
    await page.waitForSelector('#parameters');
    const se = (await app.inject({ method: 'POST', url: '/api/fits/stokes-einstein', payload: { radius: '1 um' } })).json();
    const dText = (await page.textContent('#parameters tbody tr:first-child'))!;
    const shown = Number(/([\d.]+) µm²\/s/.exec(dText)![1]);
    expect(shown).toBeCloseTo(Number((se.parameters.diffusivity.value / 1e-12).toPrecision(4)), 10);
    await page.screenshot({ path: `${shots}/calibrate-stokes-einstein.png`, fullPage: true });
    expect(errors).toEqual([]);
    await page.close();
  }, 90_000);
  it('fits kinetics and drift, and applies a drift fit to the chosen coupling', async () => {
    // Treloar's puromycin rates (treated cells), the published table behind tests/calibrate/: columns without units
    const puromycin = readFileSync(`${root}tests/calibrate/puromycin-treated.csv`, 'utf8');
    const { page, errors } = await open('/calibrate?species=ptj-1um-b07');
    await page.waitForFunction(() => (document.getElementById('species') as HTMLSelectElement).value === 'ptj-1um-b07');
    await page.selectOption('#method', 'kinetics');
    // loaded as a file this time: the text box shows it, and the measurement keeps its name
    await page.setInputFiles('#file', `${root}tests/calibrate/puromycin-treated.csv`);
    await page.waitForFunction(() => (document.getElementById('data') as HTMLTextAreaElement).value.startsWith('conc,rate'));
    expect(await page.inputValue('#data')).toBe(puromycin);
    await page.click('#run');
    await page.waitForSelector('#parameters');
    const k = (await app.inject({ method: 'POST', url: '/api/fits/kinetics', payload: { data: puromycin, options: {} } })).json();
    const rows = await page.$$eval('#parameters tbody tr', (trs) => trs.map((tr) => tr.textContent ?? ''));
    const [vmax, vmaxSd] = readValue(rows.find((r) => r.includes('maxRate'))!);
    expect(Math.abs(vmax - k.parameters.maxRate.value)).toBeLessThanOrEqual(0.05 * vmaxSd);
    const svg = await page.textContent('figure svg');
    expect(svg).toContain('substrate concentration (conc; no unit given)');
    // no turnover per particle and no units: the page says why it cannot go on the shelf
    expect(await page.textContent('#results')).toContain('12 data rows from puromycin-treated.csv');
    await page.click('#store');
    await page.waitForSelector('#apply-blocked');
    const mId = Number(/measurement (\d+)/.exec((await page.textContent('#stored'))!)![1]);
    expect((await app.inject({ method: 'GET', url: `/api/measurements/${mId}` })).json()).toMatchObject({ fileName: 'puromycin-treated.csv', data: puromycin, method: 'kinetics' });
    expect(await page.textContent('#apply-blocked')).toMatch(/no turnover per particle/);
    expect(await page.isDisabled('#apply-button')).toBe(true);
    await page.screenshot({ path: `${shots}/calibrate-kinetics.png`, fullPage: true });

    // drift: invented velocities against a gradient (the same table as tests/http/calibrate.test.ts)
    const drift = 'gradient [mM/mm],velocity [um/s]\n-2,0.21\n-1,0.09\n1,-0.11\n2,-0.19\n3,-0.31\n';
    await page.selectOption('#method', 'drift');
    await page.selectOption('#chemical', 'h2o2');
    await page.fill('#data', drift);
    await page.click('#run');
    await page.waitForSelector('#parameters');
    const svgs = await page.$$eval('figure svg', (x) => x.map((s) => s.textContent ?? ''));
    expect(svgs[0]).toContain('concentration gradient (mM/mm)');
    expect(svgs[0]).toContain('drift velocity (nm/s)'); // 0.31 µm/s reads 310 nm/s (format.ts picks the unit)
    const dr = (await app.inject({ method: 'POST', url: '/api/fits/drift', payload: { data: drift, options: {} } })).json();
    await page.click('#store');
    await page.waitForSelector('#apply-table');
    expect(await page.textContent('#apply-table')).toContain('50 ± 10 µm²/(s·mM)');
    await page.click('#apply-button');
    await page.waitForSelector('#applied');
    const sp = (await app.inject({ method: 'GET', url: '/api/species/ptj-1um-b07' })).json();
    const mu = sp.record.couplings.find((c: { chemical: string }) => c.chemical === 'h2o2').mobility;
    expect(Math.abs(mu.si - dr.parameters.mobility.value)).toBeLessThanOrEqual(0.05 * dr.parameters.mobility.sd);
    await page.screenshot({ path: `${shots}/calibrate-drift.png`, fullPage: true });
    expect(errors).toEqual([]);
    await page.close();
  }, 90_000);
  it('applies a kinetics fit with the enzyme concentration of the assay: the saturating activity of the chosen coupling', async () => {
    // invented initial rates of the demo catalase lot (a made-up assay at 10 nM enzyme)
    const rates = 'substrate [mM],rate [mM/s]\n10,0.23\n20,0.39\n50,0.78\n100,1.09\n200,1.44\n400,1.66\n';
    const { page, errors } = await open('/calibrate?species=catalase-e3&method=kinetics');
    await page.waitForFunction(() => (document.getElementById('species') as HTMLSelectElement).value === 'catalase-e3');
    expect(await page.inputValue('#method')).toBe('kinetics');
    expect(await page.inputValue('#chemical')).toBe('h2o2');
    await page.fill('#kinetics-options input[placeholder="e.g. 10 nM"]', '10 nM');
    await page.fill('#data', rates);
    await page.click('#run');
    await page.waitForSelector('#parameters');
    const k = (await app.inject({ method: 'POST', url: '/api/fits/kinetics', payload: { data: rates, options: { enzymeConcentration: '10 nM' } } })).json();
    const turnover = k.parameters.maxRatePerParticle as { value: number; sd: number };
    await page.click('#store');
    await page.waitForSelector('#apply-table');
    const preview = (await page.textContent('#apply-table'))!;
    expect(preview).toContain('80 ± 20 mM'); // the Michaelis constant on the demo shelf now
    expect(preview).toMatch(/h2o2: maximal turnover per particle/);
    await page.click('#apply-button');
    await page.waitForSelector('#applied');
    const sp = (await app.inject({ method: 'GET', url: '/api/species/catalase-e3' })).json();
    const act = sp.record.couplings.find((c: { chemical: string }) => c.chemical === 'h2o2').activity;
    expect(Math.abs(act.maxRate.si - turnover.value)).toBeLessThanOrEqual(0.05 * turnover.sd);
    expect(Math.abs(act.michaelis.si - k.parameters.michaelis.value)).toBeLessThanOrEqual(0.05 * k.parameters.michaelis.sd);
    expect(act.product).toBe('o2'); // kept from the coupling
    await page.screenshot({ path: `${shots}/calibrate-kinetics-applied.png`, fullPage: true });
    expect(errors).toEqual([]);
    await page.close();
  }, 90_000);
  it('fits tracked positions: the MSD from the tracks, with error bars from their covariance and a chi-square', async () => {
    // invented 2D random walks (a seeded generator, D = 0.2 µm²/s, frame 0.1 s): 40 tracks of 80 positions
    let seed = 7;
    const uniform = () => ((seed = (seed * 1103515245 + 12345) % 2 ** 31) + 0.5) / 2 ** 31;
    const gauss = () => Math.sqrt(-2 * Math.log(uniform())) * Math.cos(2 * Math.PI * uniform());
    const step = Math.sqrt(2 * 0.2 * 0.1);
    const lines = ['track,t [s],x [um],y [um]'];
    for (let k = 1; k <= 40; k++) {
      let x = 0;
      let y = 0;
      for (let i = 0; i < 80; i++) {
        lines.push(`${k},${(i * 0.1).toFixed(1)},${x.toFixed(4)},${y.toFixed(4)}`);
        x += step * gauss();
        y += step * gauss();
      }
    }
    const tracks = `${lines.join('\n')}\n`;
    const { page, errors } = await open('/calibrate');
    // as a paste does: page.fill types 100 kB into a textarea at about 3 kB/s in headless Chromium
    await page.$eval('#data', (el, text) => {
      (el as HTMLTextAreaElement).value = text;
      el.dispatchEvent(new Event('input', { bubbles: true }));
    }, tracks);
    await page.click('#run');
    await page.waitForSelector('#parameters');
    const api = (await app.inject({ method: 'POST', url: '/api/fits/msd', payload: { data: tracks, options: { model: 'passive-2d' } } })).json();
    expect(api.weighting).toBe('gls-covariance');
    expect(await page.textContent('#goodness')).toMatch(new RegExp(`Reduced chi-square [\\d.]+ \\(chi-square [\\d.]+ on ${api.dof} degrees of freedom`));
    expect(await page.textContent('#goodness')).toMatch(/covariance of the MSD between lags/);
    expect(await page.$$('#understated')).toHaveLength(0);
    const [shown, shownSd] = readValue((await page.textContent('#parameters tbody tr:first-child'))!);
    expect(Math.abs(shown * 1e-12 - api.parameters.diffusivity.value)).toBeLessThanOrEqual(0.05 * shownSd * 1e-12);
    expect(await page.textContent('figure figcaption')).toMatch(/bars ± 1 sd/);
    await page.screenshot({ path: `${shots}/calibrate-tracks.png`, fullPage: true });
    expect(errors).toEqual([]);
    await page.close();
  }, 90_000);
});
