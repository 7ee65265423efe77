/**
 * `brink outcomes` (server/cli.ts): record a filled-in CSV against a plan's sheet in a database file, show the
 * current set and history, refuse a stale base revision and a bad row (exit 2, the line named), and print the
 * empirical threshold. The states are invented inputs; the checks are the stored tubes against the sheet's own.
 */
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { main } from '../../server/cli.js';
import { buildApp } from '../../server/http/app.js';
import { seedDemoShelf } from '../../server/shelf/seed.js';
import { openDatabase } from '../../server/store/db.js';
import { planRequest, postPlan } from '../helpers/plans.js';

describe('brink outcomes', () => {
  it('records a CSV, lists it, refuses stale and bad entries, and fits the dose response', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'brink-outcomes-'));
    const path = join(dir, 'b.sqlite');
    const db = openDatabase(path);
    seedDemoShelf(db);
    const a = await buildApp({ config: { closeDatabase: true }, db });
    const p = (await postPlan(a, { ...planRequest, candidates: ['ptj-1um-b07'] })).json();
    const sheet = a.sheets.build(p.id, { replicates: 2 });
    await a.close();
    const t50 = p.result.candidates[0].threshold.density;
    // above the threshold: stationary, except one tube of the lowest such dose (invented bench results)
    const rows = ['tube, state, onset [min], length [um], notes'];
    let firstAbove = true;
    for (const t of sheet.tubes.filter((x) => x.kind === 'series' || x.kind === 'no-dopant')) {
      const above = t.doseSi! > t50;
      t.tubes.forEach((lid, i) => rows.push(above && !(firstAbove && i === 0) ? `${lid}, stationary, 14, 350, spots` : `${lid}, stable, , ,`));
      if (above) firstAbove = false;
    }
    // and one tube below the threshold that clustered
    rows[3] = rows[3]!.replace(/stable, , ,$/, 'stationary, 30, 500, late');
    const csv = join(dir, 'filled.csv');
    writeFileSync(csv, rows.join('\n') + '\n');
    let out = '';
    let err = '';
    const io = { out: (t: string) => (out += t), err: (t: string) => (err += t) };
    expect(await main(['outcomes', String(p.id), csv, '--db', path, '--replicates', '2', '--author', 'a technician (invented)'], io)).toBe(0);
    const set = JSON.parse(out);
    expect(set.revision).toBe(1);
    expect(set.sheetOptions).toEqual({ replicates: 2, candidate: 'ptj-1um-b07' });
    expect(set.tubes.length).toBe(rows.length - 1);
    for (const t of set.tubes) expect(t.dose).toBe(sheet.tubes.find((x) => x.tubes.includes(t.tube))!.doseSi);
    expect(set.unobserved).toEqual(['CFa', 'CFb', 'CAa', 'CAb']);
    // again without the base revision: refused (exit 2), with what to send
    out = '';
    expect(await main(['outcomes', String(p.id), csv, '--db', path, '--replicates', '2'], io)).toBe(2);
    expect(err).toMatch(/send baseRevision 1/);
    // a bad row: the line and column are named
    const bad = join(dir, 'bad.csv');
    writeFileSync(bad, 'tube,state,onset [min],length [um],notes\nD1a,stable,,,\nD2a,stationary,-4,,\n');
    err = '';
    expect(await main(['outcomes', String(p.id), bad, '--db', path, '--replicates', '2', '--base-revision', '1'], io)).toBe(2);
    expect(err).toMatch(/line 3, column 3 \(onset \[min\]\): an onset time cannot be negative/);
    // the listing
    out = '';
    expect(await main(['outcomes', String(p.id), '--db', path], io)).toBe(0);
    expect(JSON.parse(out).history.length).toBe(1);
    // the empirical threshold: a converged logit fit (the data are not separated), its ED50 near the plan's threshold
    out = '';
    expect(await main(['outcomes', String(p.id), '--db', path, '--dose-response'], io)).toBe(0);
    const dr = JSON.parse(out);
    expect(dr.fit.stop).toBe('converged');
    expect(dr.fit.parameters.ed50.unit).toBe('1/m^3');
    expect(dr.fit.parameters.ed50.interval.lower).toBeLessThan(t50 * 1.6);
    expect(dr.fit.parameters.ed50.interval.upper).toBeGreaterThan(t50 / 1.6);
    expect(await main(['outcomes', String(p.id), '--db', path, '--dose-response', '--link', 'weibull'], io)).toBe(2);
  });
});
