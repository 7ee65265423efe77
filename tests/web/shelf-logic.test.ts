/**
 * The Shelf pages' pure logic (web/src/pages/shelf-logic.ts): records flattened into labelled fields,
 * revision differences, a stale save's three-way comparison, problems matched to fields, import
 * conflicts in words. Unit sizes used below are the SI prefix definitions (µ = 10⁻⁶, a = 10⁻¹⁸,
 * 1 mM = 1 mol/m³), not invented numbers.
 */
import { describe, expect, it } from 'vitest';
import { conflictWords, fieldForProblem, problemWords, flattenRecord, prettyUnits, recordDiff, revisionChanges, sideBySide, type RevisionLike } from '../../web/src/pages/shelf-logic.js';

/** a stored species record as the API keeps it (SI, as typed, provenance) */
const stored = {
  id: 'bead',
  name: 'bead B1',
  kind: 'colloid',
  diffusivity: { si: 2.2e-13, sd: 2e-14, unit: 'um^2/s', input: '0.22 um^2/s', sdInput: '0.02 um^2/s' },
  radius: { si: 1e-6, sd: 0, unit: 'um', input: '1 um' },
  couplings: [
    { chemical: 'h2o2', activity: { si: -2e-16, sd: 4e-17, unit: 'mol/s', input: '-2e-16 mol/s', sdInput: '0.4e-16 mol/s' }, mobility: { si: 5e-11, sd: 0, unit: 'um^2/(s*mM)', input: '50 um^2/(s*mM)' } },
  ],
  provenance: { source: 'demo', reference: 'invented', date: '2026-11-20' },
};

describe('flattenRecord', () => {
  it('labels each field, sets units as printed and adds bench units only where the typed unit differs', () => {
    const f = new Map(flattenRecord(stored).map((x) => [x.key, x]));
    expect(f.get('diffusivity')?.text).toBe('0.22 µm²/s ± 0.02 µm²/s');
    expect(f.get('diffusivity')?.raw).toBe('0.22 um^2/s ± 0.02 um^2/s');
    expect(f.get('radius')?.text).toBe('1 µm');
    // −2e-16 mol/s = −200 amol/s (a = 10⁻¹⁸)
    expect(f.get('couplings[h2o2].activity')?.text).toBe('-2e-16 mol/s ± 0.4e-16 mol/s (= −200 ± 40 amol/s)');
    expect(f.get('couplings[h2o2].activity')?.label).toBe('h2o2 coupling: activity');
    expect(f.get('couplings[h2o2].mobility')?.text).toBe('50 µm²/(s·mM)');
    expect(f.get('provenance')?.text).toBe('demo; invented; 2026-11-20');
  });

  it('reads a typed record (as a form sends it) the same way as the stored one', () => {
    const typed = { id: 'bead', name: 'bead B1', kind: 'colloid', diffusivity: { value: '0.22 um^2/s', sd: '0.02 um^2/s' }, radius: '1 um', couplings: [{ chemical: 'h2o2', activity: { value: '-2e-16 mol/s', sd: '0.4e-16 mol/s' }, mobility: '50 um^2/(s*mM)' }], provenance: stored.provenance };
    expect(recordDiff(stored, typed)).toEqual([]);
  });

  it('sets typed units as printed', () => {
    expect(prettyUnits('0.3 um^2/s')).toBe('0.3 µm²/s');
    expect(prettyUnits('50 um^2/(s*mM)')).toBe('50 µm²/(s·mM)');
    expect(prettyUnits('5 uM')).toBe('5 µM');
    expect(prettyUnits('2.0 g/mL')).toBe('2.0 g/mL');
    expect(prettyUnits('1e-16 mol/s')).toBe('1e-16 mol/s');
  });
});

describe('revision differences', () => {
  const rev = (revision: number, record: unknown, retired = false): RevisionLike => ({ revision, action: 'edit', retired, author: 'a', note: null, createdAt: '2026-12-01T00:00:00Z', record });

  it('lists only what changed, old → new, with added and removed fields and couplings', () => {
    const next = structuredClone(stored) as typeof stored & { materialDensity?: unknown; couplings: unknown[] };
    next.diffusivity = { si: 3e-13, sd: 2e-14, unit: 'um^2/s', input: '0.3 um^2/s', sdInput: '0.02 um^2/s' };
    next.materialDensity = { si: 2000, sd: 0, unit: 'g/mL', input: '2 g/mL' };
    next.couplings = [];
    const d = revisionChanges(rev(1, stored), rev(2, next));
    expect(d.find((c) => c.key === 'diffusivity')).toEqual({ key: 'diffusivity', label: 'diffusivity', before: '0.22 µm²/s ± 0.02 µm²/s', after: '0.3 µm²/s ± 0.02 µm²/s' });
    expect(d.find((c) => c.key === 'materialDensity')).toMatchObject({ before: null, after: '2 g/mL' });
    expect(d.find((c) => c.key === 'couplings[h2o2].mobility')).toMatchObject({ before: '50 µm²/(s·mM)', after: null });
    expect(d.some((c) => c.key === 'radius' || c.key === 'name')).toBe(false);
  });

  it('a retire is a change of status; the first revision lists every field as added', () => {
    expect(revisionChanges(rev(1, stored), rev(2, stored, true))).toEqual([{ key: 'retired', label: 'status', before: 'in use', after: 'retired' }]);
    const first = revisionChanges(null, rev(1, stored));
    expect(first.every((c) => c.before === null)).toBe(true);
    expect(first.map((c) => c.key)).toContain('diffusivity');
  });

  it('reordered couplings are no change (a coupling is one per chemical)', () => {
    const two = { ...stored, couplings: [...stored.couplings, { chemical: 'o2', activity: { si: 1e-16, sd: 0, unit: 'mol/s', input: '1e-16 mol/s' } }] };
    const swapped = { ...two, couplings: [two.couplings[1], two.couplings[0]] };
    expect(recordDiff(two, swapped)).toEqual([]);
  });
});

describe('a stale save side by side', () => {
  it('says who changed each differing field since the form was opened', () => {
    const base = stored;
    const theirs = { ...stored, radius: { si: 1.2e-6, sd: 0, unit: 'um', input: '1.2 um' } };
    const mine = { ...stored, name: 'bead B1b' };
    const rows = sideBySide(base, theirs, mine).filter((r) => !r.same);
    expect(rows).toEqual([
      { key: 'name', label: 'name', base: 'bead B1', theirs: 'bead B1', mine: 'bead B1b', same: false, changedBy: 'me' },
      { key: 'radius', label: 'radius', base: '1 µm', theirs: '1.2 µm', mine: '1 µm', same: false, changedBy: 'them' },
    ]);
    const both = sideBySide(base, theirs, { ...stored, radius: '1.1 um' }).find((r) => r.key === 'radius');
    expect(both?.changedBy).toBe('both');
  });
});

describe('fieldForProblem', () => {
  const known = ['id', 'name', 'diffusivity', 'stock.description', 'stock.massConcentration', 'couplings', 'couplings.0', 'couplings.0.mobility', 'couplings.0.activity.maxRate'];
  it('maps the API path to the nearest field of the form', () => {
    expect(fieldForProblem('record.diffusivity', known)).toBe('diffusivity');
    expect(fieldForProblem('record.diffusivity.sd', known)).toBe('diffusivity');
    expect(fieldForProblem('record.couplings[0].mobility', known)).toBe('couplings.0.mobility');
    expect(fieldForProblem('record.couplings[0].activity.maxRate.value', known)).toBe('couplings.0.activity.maxRate');
    expect(fieldForProblem('record.couplings[0]', known)).toBe('couplings.0');
    expect(fieldForProblem('record.couplings[3].chemical', known)).toBe('couplings');
    expect(fieldForProblem('record.stock.massConcentration', known)).toBe('stock.massConcentration');
    expect(fieldForProblem('record.radius', known)).toBeNull();
    expect(fieldForProblem('', known)).toBeNull();
  });
});

describe('import conflicts in words', () => {
  it('tells the three cases apart', () => {
    expect(conflictWords({ path: 'chemicals[0]', type: 'chemical', id: 'glucose', exportedRevision: 1, currentRevision: 2 })).toBe(
      'Chemical “glucose” (chemicals[0]): the file was exported at revision 1; the shelf has since been changed (now revision 2). Importing would undo that change.',
    );
    expect(conflictWords({ path: 'species[2]', type: 'species', id: 'b', exportedRevision: null, currentRevision: 3 })).toMatch(/does not say which revision/);
    expect(conflictWords({ path: 'species[2]', type: 'species', id: 'b', exportedRevision: 9, currentRevision: 3 })).toMatch(/another database or was edited by hand/);
  });
});

describe('problemWords', () => {
  it('says a unit reader\'s dimensions in words, and leaves other messages alone', () => {
    expect(problemWords('expected length^5/(time*amount), got "3 kg" (mass)')).toBe('this needs a mobility (such as µm²/(s·mM)); "3 kg" is a mass (such as mg)');
    expect(problemWords('a coupling needs an activity, a mobility or both')).toBe('a coupling needs an activity, a mobility or both');
  });
});
