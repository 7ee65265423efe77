/**
 * `brink screen` on a terminal draws a progress bar on stderr (and clears it); without a
 * terminal stderr stays empty and stdout is the same. The bar itself: width, percentage,
 * the stage cut to the line, at most one redraw per 100 ms except the end.
 */
import { describe, expect, it } from 'vitest';
import { main } from '../../server/cli.js';
import { progressBar } from '../../server/jobs/progress-bar.js';

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
