/**
 * Issue 13's loop on the command line, on a database file: brink seed → brink plan → brink sheet (JSON) →
 * brink outcomes (a filled-in CSV) → brink update --apply → brink next → brink sheet of the next plan (its
 * series is the designed one). Then reversed outcomes: brink update flags them and --apply refuses (exit 2).
 * The bench results are invented (each tube as the plan predicts at its dose, or reversed); the checks are the
 * commands' own contracts.
 */
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { main } from '../../server/cli.js';
import { planRequest } from '../helpers/plans.js';

interface SheetTube {
  kind: string;
  tubes: string[];
  doseSi: number | null;
  plannedDose: { value: number };
}

function filledCsv(tubes: SheetTube[], threshold: number, reversed = false): string {
  const rows = ['tube,state,onset [min],length [um],notes'];
  for (const t of tubes.filter((x) => x.kind === 'series' || x.kind === 'no-dopant')) {
    const crossed = t.doseSi! > threshold !== reversed;
    // no onset or length: those are data too (docs/model.md §13), and invented ones would contradict the model
    for (const lid of t.tubes) rows.push(crossed ? `${lid},stationary,,,clusters` : `${lid},stable,,,`);
  }
  return rows.join('\n') + '\n';
}

describe('brink plan, update, next', () => {
  it('runs the loop from a filled-in CSV to the next plan, and refuses to apply contradicting outcomes', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'brink-loop-'));
    const db = join(dir, 'b.sqlite');
    let out = '';
    let err = '';
    const io = { out: (t: string) => (out += t), err: (t: string) => (err += t) };
    const run = async (...args: string[]) => {
      out = '';
      err = '';
      return main([...args, '--db', db], io);
    };
    expect(await run('seed')).toBe(0);
    const req = join(dir, 'plan.json');
    writeFileSync(req, JSON.stringify({ ...planRequest, name: 'loop on the command line', candidates: ['ptj-1um-b07'], uncertainty: { samples: 60, seed: 4 } }));
    expect(await run('plan', req, '--format', 'json'), err).toBe(0);
    const plan = JSON.parse(out);
    expect(plan.planId).toBe(1);
    const threshold = plan.candidates[0].threshold as number;
    expect(await run('plan', req)).toBe(0);
    expect(out).toMatch(/^plan 2: loop on the command line\n {2}ptj-1um-b07: threshold /);
    expect(out).toMatch(/bench sheet: brink sheet 2 --db .* --format md\n$/);

    expect(await run('sheet', '1', '--format', 'json')).toBe(0);
    const sheet = JSON.parse(out);
    const csv = join(dir, 'filled.csv');
    writeFileSync(csv, filledCsv(sheet.tubes, threshold));
    expect(await run('outcomes', '1', csv, '--author', 'a technician (invented)'), err).toBe(0);
    const set = JSON.parse(out);

    // the update without --apply writes nothing
    expect(await run('update', '1', '--format', 'text'), err).toBe(0);
    expect(out).toMatch(new RegExp(`^update of plan 1 from outcome set ${set.id} revision 1 \\(candidate ptj-1um-b07; \\d+ tubes used, 0 unclear\\)\\n`));
    expect(out).toMatch(/\nmethod: (importance sampling over the plan's 60 draws|sequential Monte Carlo from 60 prior draws .*), effective sample size \d+/);
    expect(out).toMatch(/\nconsistency: consistent: /);
    expect(out).toMatch(/\n {2}ptj-1um-b07: .* → .*\n/);
    expect(out).toMatch(/nothing written: add --apply/);
    expect(await run('update', '1', '--apply', '--author', 'a student (invented)'), err).toBe(0);
    const u = JSON.parse(out);
    expect(['importance sampling', 'sequential Monte Carlo']).toContain(u.method);
    expect(u.ess).toBeGreaterThan(0);
    expect(u.consistency.consistent).toBe(true);
    expect(u.coefficients.length).toBeGreaterThan(0);
    for (const c of u.coefficients) expect(c.after.sd).toBeGreaterThanOrEqual(0);
    expect(u.applied.map((r: { key: string }) => r.key)).toContain('ptj-1um-b07');

    expect(await run('next', '1', '--tubes', '5', '--format', 'json'), err).toBe(0);
    const n = JSON.parse(out);
    expect(n.nextPlanId).toBe(3);
    expect(n.designed.doses).toHaveLength(5);
    expect(n.shelf.changedSincePlan).toBe(true);
    expect(await run('sheet', String(n.nextPlanId), '--format', 'json')).toBe(0);
    const s2 = JSON.parse(out);
    expect(s2.prediction.series.from).toBe('plan-series');
    expect(s2.prediction.series.designedFrom).toMatchObject({ plan: 1, outcomeSet: set.id, outcomeRevision: 1 });
    expect(s2.tubes.filter((t: SheetTube) => t.kind === 'series' || t.kind === 'no-dopant').map((t: SheetTube) => t.plannedDose.value)).toEqual([0, ...n.designed.doses.map((x: number) => Number((x * 1e-6).toPrecision(4)))]);
    // the text form names the new plan and how to print its sheet
    expect(await run('next', '1', '--tubes', '4', '--simulations', '40')).toBe(0);
    expect(out).toMatch(/^next plan 4 \(after plan 1\): 4 doses of ptj-1um-b07 designed to minimise the expected posterior variance of log10 threshold\n/);
    expect(out).toMatch(/\n {2}default fixed series \(\d+ doses: /);
    expect(out).toMatch(/its sheet \(the designed doses, plus the no-dopant control\): brink sheet 4 --db .* --format md\n$/);

    // reversed outcomes on plan 2: flagged; --apply refused with exit 2 and nothing written
    expect(await run('sheet', '2', '--format', 'json')).toBe(0);
    const csv2 = join(dir, 'reversed.csv');
    writeFileSync(csv2, filledCsv(JSON.parse(out).tubes, threshold, true));
    expect(await run('outcomes', '2', csv2), err).toBe(0);
    expect(await run('update', '2', '--apply', '--format', 'text')).toBe(2);
    expect(out).toMatch(/\nconsistency: INCONSISTENT: .*the model or the shelf is wrong/);
    expect(err).toMatch(/^not applied \(inconsistent-outcomes: the update was not applied/);
    expect(await run('next', '2', '--tubes', '4', '--simulations', '40')).toBe(2);
    expect(err).toMatch(/^cannot do that \(inconsistent-outcomes\): no next plan was made: /);

    // on a terminal the progress goes to stderr as a bar that is cleared at the end; stdout stays the JSON
    let tOut = '';
    let tErr = '';
    expect(await main(['update', '1', '--db', db], { out: (t) => (tOut += t), err: (t) => (tErr += t), errColumns: 72 })).toBe(0);
    expect(JSON.parse(tOut).planId).toBe(1);
    if (tErr !== '') expect(tErr.endsWith('\r\x1b[K')).toBe(true);

    // usage errors
    expect(await run('update', 'x')).toBe(2);
    expect(err).toMatch(/^usage: brink update <plan-id>/);
    expect(await run('next', '1', '--tubes', 'many')).toBe(2);
    expect(err).toMatch(/--tubes: expected a whole number, got "many"/);
    expect(await run('next', '1', '--tubes', '99')).toBe(2);
    expect(err).toMatch(/tubes/);
    expect(await run('update', '99')).toBe(2);
    expect(err).toBe("no plan 99\n");
  }, 240_000);

  it('brink plan words an enzyme candidate in nM, as the Plan page does', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'brink-enzyme-'));
    const db = join(dir, 'b.sqlite');
    let out = '';
    let err = '';
    const io = { out: (t: string) => (out += t), err: (t: string) => (err += t) };
    const run = async (...args: string[]) => {
      out = '';
      err = '';
      return main([...args, '--db', db], io);
    };
    expect(await run('seed')).toBe(0);
    const req = join(dir, 'plan.json');
    writeFileSync(req, JSON.stringify({ ...planRequest, name: 'catalase as the dopant', candidates: ['catalase-e3'] }));
    expect(await run('plan', req, '--format', 'json'), err).toBe(0);
    const threshold = JSON.parse(out).candidates[0].threshold as number;
    expect(await run('plan', req), err).toBe(0);
    // molecules per m³ / N_A (6.02214076e23 /mol, SI 2019) = mol/m³ = mM; × 10⁶ = nM
    const nM = Number(((threshold / 6.02214076e23) * 1e6).toPrecision(3));
    expect(nM).toBeGreaterThan(0.01);
    expect(nM).toBeLessThan(1000);
    expect(out).toContain(`  catalase-e3: threshold ${nM} nM (`);
    expect(out).not.toMatch(/ per mL|mol\/m\^3/);
  }, 60_000);
});
