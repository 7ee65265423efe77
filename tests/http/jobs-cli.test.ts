/**
 * `brink screen` on a terminal draws a progress bar on stderr (and clears it); without a
 * terminal stderr stays empty and stdout is the same. The bar itself: width, percentage,
 * the stage cut to the line, at most one redraw per 100 ms except the end.
 */
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { main } from '../../server/cli.js';
import { baseModes, WORK_BUDGET } from '../../server/jobs/budget.js';
import { progressBar } from '../../server/jobs/progress-bar.js';
import { parseMixture } from '../../server/schema/mixture.js';

const file = new URL('../../seeds/screens/washed-janus.json', import.meta.url).pathname;

describe('brink screen progress', () => {
  it('draws a bar on a terminal and clears it; the output is the same as without one', async () => {
    let plainOut = '';
    let plainErr = '';
    expect(await main(['screen', file], { out: (t) => (plainOut += t), err: (t) => (plainErr += t) })).toBe(0);
    expect(plainErr).toBe('');
    let out = '';
    let err = '';
    expect(await main(['screen', file], { out: (t) => (out += t), err: (t) => (err += t), errColumns: 72 })).toBe(0);
    expect(out).toBe(plainOut);
    const frames = err.split('\r').filter((f) => f !== '');
    expect(frames.length).toBeGreaterThanOrEqual(2);
    expect(frames[0]).toMatch(/^\[-+\] {3}0 % {2}candidate 1 of 4: /);
    expect(frames.at(-2)!.endsWith('\x1b[K')).toBe(true);
    expect(frames.at(-2)!.slice(0, -3)).toMatch(/^\[#+\] 100 % {2}ranking the candidates$/);
    expect(frames.at(-1)).toBe('\x1b[K');
    for (const f of frames) expect(f.replace('\x1b[K', '').length).toBeLessThanOrEqual(71);
  });

  it('has no fixed number of candidates: 60 pass; the work budget refuses a larger screen with exit 2, naming the numbers', async () => {
    const doc = JSON.parse(readFileSync(file, 'utf8'));
    const tracer = doc.candidates.find((c: { id: string }) => c.id === 'silica-1um-t01');
    const dir = mkdtempSync(join(tmpdir(), 'brink-screen-'));
    const many = join(dir, 'many.json');
    writeFileSync(many, JSON.stringify({ ...doc, uncertainty: undefined, candidates: Array.from({ length: 60 }, (_, i) => ({ ...tracer, id: `tracer-${i}` })) }));
    let out = '';
    expect(await main(['screen', many], { out: (t) => (out += t), err: () => {} })).toBe(0);
    expect(JSON.parse(out).candidates).toHaveLength(60);
    // 2000 draws of n candidates: n × 2001 × modes just above the budget
    const modes = baseModes(parseMixture(doc.base));
    const n = Math.floor(WORK_BUDGET / (2001 * modes)) + 1;
    const big = join(dir, 'big.json');
    writeFileSync(big, JSON.stringify({ ...doc, uncertainty: { samples: 2000, seed: 1 }, candidates: Array.from({ length: n }, (_, i) => ({ ...tracer, id: `tracer-${i}` })) }));
    let err = '';
    expect(await main(['screen', big], { out: () => {}, err: (t) => (err += t) })).toBe(2);
    expect(err).toContain(`uncertainty.samples: this screen would need ${(n * 2001 * modes).toExponential(3)} units of work (${n} candidates × (1 + 2000 Monte Carlo draws) × ${modes} modes`);
    expect(err).toContain(`at most ${n - 1} candidates with these draws`);
  });

  it('the bar: fraction as # of the width, the stage cut with an ellipsis, redrawn at most every 100 ms but always at the end', () => {
    const writes: string[] = [];
    let t = 0;
    const bar = progressBar((s) => writes.push(s), 40, () => t);
    bar.update(0.5, 'a stage far too long to fit on a forty-column line');
    // 40 columns: the 20-character head, then 40 − 1 − 20 = 19 for the stage (18 characters and the ellipsis)
    expect(writes[0]).toBe('\r[#####-----]  50 %  a stage far too lo…\x1b[K');
    t = 50;
    bar.update(0.6, 'skipped');
    expect(writes).toHaveLength(1);
    t = 150;
    bar.update(0.6, 'drawn');
    t = 151;
    bar.update(1, 'end');
    expect(writes.slice(1)).toEqual(['\r[######----]  60 %  drawn\x1b[K', '\r[##########] 100 %  end\x1b[K']);
    bar.done();
    expect(writes.at(-1)).toBe('\r\x1b[K');
  });
});
