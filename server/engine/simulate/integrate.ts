/**
 * Time stepping (docs/model.md §15): exponential time differencing of first
 * order (ETD1, Cox & Matthews, J. Comput. Phys. 176 (2002) 430–455) — the
 * diffusion D̃_m ∇² is integrated exactly in Fourier space, the drift N_m
 * explicitly —
 *
 *     ρ̂(t + h) = e^{−D̃ k² h} ρ̂(t) + h φ₁(−D̃ k² h) N̂(ρ(t)),   φ₁(z) = (e^z − 1)/z,
 *
 * with the step size chosen by step doubling (Hairer, Nørsett & Wanner, Solving
 * Ordinary Differential Equations I, 2nd ed., §II.4): one step of h and two of
 * h/2; their difference estimates the local error, the step is accepted when
 * it is below the tolerance and the locally extrapolated 2y_{h/2} − y_h (second
 * order) is kept when it is non-negative, else y_{h/2}. Negative densities: a
 * step whose two half steps leave clearly less negative mass than the full step
 * (and some value below −10⁻⁹ of the mean, and the step above its floor) is
 * retried with a quarter of the step (the step was too long); otherwise every
 * negative value of the kept state is set to 0 and the deficit made up, so the
 * total is unchanged: by default from every positive cell in proportion to its
 * density (`globalRepair`, a rescaling by 1 − d/P), or with `repair: 'local'`
 * from the nearest positive cells (`localRepair`: the smallest square, or
 * interval in 1D, around the cell that holds enough), which keeps the correction
 * where the ringing is but leaves dents that ring again: in under-resolved runs
 * it takes 2–5 times as many steps (docs/model.md §15). A step that moved a value below −10⁻⁹ of the mean (the grid's
 * resolution: Gibbs ringing at a sharp cluster edge) counts in
 * `positivityRepairs`; the mass moved is summed in `repairedMass`. The k = 0 mode
 * is untouched by N, so every species' total is conserved to rounding.
 */
import type { SpectralField } from './field.js';

export interface StepStats {
  accepted: number;
  rejected: number;
  /** accepted steps whose repair moved a density below −10⁻⁹ of its species' mean */
  positivityRepairs: number;
  /** largest share of a species' total moved by the repair in one step */
  largestRepair: number;
  /** per species, the share of its total moved by all repairs together (rounding-level cuts included) */
  repairedMass: Float64Array;
  /** widest neighbourhood any repair reached, in cells from the negative cell (0: no repair) */
  repairReach: number;
}

/**
 * Global, mass-conserving positivity repair of one field on the chamber's cells, in place: every negative cell is
 * set to 0 and every positive one scaled by 1 − d/P (d the total deficit, P the sum of the positive values), so
 * none turns negative and the total is unchanged to rounding. Returns the mass moved (d), the deficit below `tiny`
 * alone and `points` as the reach (the whole chamber gives).
 */
export function globalRepair(v: Float64Array, points: number, tiny = 0): { moved: number; beyond: number; reach: number } {
  let d = 0;
  let beyond = 0;
  let P = 0;
  for (let i = 0; i < v.length; i++) {
    const x = v[i]!;
    if (x < 0) {
      d -= x;
      if (x < tiny) beyond -= x;
    } else P += x;
  }
  if (d === 0) return { moved: 0, beyond: 0, reach: 0 };
  const keep = P > 0 ? Math.max(0, 1 - d / P) : 0;
  for (let i = 0; i < v.length; i++) v[i] = v[i]! < 0 ? 0 : v[i]! * keep;
  return { moved: d, beyond, reach: points };
}

/**
 * Local, mass-conserving positivity repair of one field on the chamber's cells
 * (points^dims, x fastest), in place. Each negative cell, in index order, is set
 * to 0 and its deficit d is taken from the positive cells of the smallest
 * neighbourhood around it that holds at least d: the cells within r cells along
 * every axis (a square in 2D), r = 1, 2, … — across the edges when `periodic`,
 * cut at the walls otherwise (sealed: the wall is a mirror, whose images are the
 * same particles) — each positive cell giving d·v/P (P their sum), so none turns
 * negative and the total is unchanged to rounding. When no window short of the
 * whole chamber holds enough, the whole chamber gives (the total is positive).
 * Returns the mass moved (Σ d), the deficit below `tiny` alone (0 when every
 * negative value was rounding-level) and the widest r used (`points` when the
 * whole chamber gave).
 */
export function localRepair(v: Float64Array, points: number, dims: 1 | 2, periodic: boolean, tiny = 0): { moved: number; beyond: number; reach: number } {
  const n = points;
  const ny = dims === 2 ? n : 1;
  const cells = n * ny;
  let moved = 0;
  let beyond = 0;
  let reach = 0;
  // the largest r whose window holds no cell twice (periodic) or still grows (sealed)
  const rMax = periodic ? Math.floor((n - 1) / 2) : n - 1;
  for (let i = 0; i < cells; i++) {
    const vi = v[i]!;
    if (!(vi < 0)) continue;
    const d = -vi;
    v[i] = 0;
    moved += d;
    if (vi < tiny) beyond += d;
    const x0 = i % n;
    const y0 = (i - x0) / n;
    let P = 0;
    let r = 0;
    let whole = false;
    // grow the window one shell at a time until its positive cells hold d
    while (P < d) {
      r++;
      if (r > rMax) {
        whole = true;
        break;
      }
      const ry = dims === 2 ? r : 0;
      for (let dy = -ry; dy <= ry; dy++) {
        let y = y0 + dy;
        if (periodic) y = (y + ny) % ny;
        else if (y < 0 || y >= ny) continue;
        const edgeRow = dy === -r || dy === r;
        const step = edgeRow ? 1 : 2 * r;
        for (let dx = -r; dx <= r; dx += step) {
          let x = x0 + dx;
          if (periodic) x = (x + n) % n;
          else if (x < 0 || x >= n) continue;
          const c = v[y * n + x]!;
          if (c > 0) P += c;
        }
      }
    }
    if (whole) {
      P = 0;
      for (let j = 0; j < cells; j++) if (v[j]! > 0) P += v[j]!;
      if (!(P > 0)) continue;
      const keep = Math.max(0, 1 - d / P);
      for (let j = 0; j < cells; j++) if (v[j]! > 0) v[j] = v[j]! * keep;
      reach = Math.max(reach, n);
      continue;
    }
    reach = Math.max(reach, r);
    const keep = Math.max(0, 1 - d / P);
    const ry = dims === 2 ? r : 0;
    for (let dy = -ry; dy <= ry; dy++) {
      let y = y0 + dy;
      if (periodic) y = (y + ny) % ny;
      else if (y < 0 || y >= ny) continue;
      for (let dx = -r; dx <= r; dx++) {
        let x = x0 + dx;
        if (periodic) x = (x + n) % n;
        else if (x < 0 || x >= n) continue;
        const j = y * n + x;
        if (v[j]! > 0) v[j] = v[j]! * keep;
      }
    }
  }
  return { moved, beyond, reach };
}

export class Integrator {
  readonly rho: Float64Array[];
  private readonly rRe: Float64Array[];
  private readonly rIm: Float64Array[];
  private readonly nRe: Float64Array[];
  private readonly nIm: Float64Array[];
  private readonly cRe: Float64Array[];
  private readonly cIm: Float64Array[];
  private readonly hRe: Float64Array[];
  private readonly hIm: Float64Array[];
  private readonly yFull: Float64Array[];
  private readonly yHalf: Float64Array[];
  private readonly sRe: Float64Array[];
  private readonly sIm: Float64Array[];
  private readonly y2: Float64Array[];
  private readonly re: Float64Array;
  private readonly im: Float64Array;
  /** whether rRe/nRe hold the spectra of the current rho */
  private fresh = false;
  readonly stats: StepStats;
  readonly mean: Float64Array;
  /** the chamber's cells of one field (the repair works there; sealed walls: mirrored back after) */
  private readonly chamber: Float64Array;

  constructor(
    readonly field: SpectralField,
    initial: Float64Array[],
    /** relative tolerance on the local error, measured against each species' fluctuation */
    readonly tolerance: number,
    /** how a negative density's deficit is made up: from the whole chamber (default) or the nearest cells */
    readonly repairMode: 'global' | 'local' = 'global',
  ) {
    const { N, S, size } = field;
    if (initial.length !== N) throw new Error(`the integrator needs ${N} starting fields, got ${initial.length}`);
    const mk = (n: number) => Array.from({ length: n }, () => new Float64Array(size));
    this.rho = initial.map((v) => Float64Array.from(v));
    this.rRe = mk(N);
    this.rIm = mk(N);
    this.nRe = mk(N);
    this.nIm = mk(N);
    this.hRe = mk(N);
    this.hIm = mk(N);
    this.cRe = mk(S);
    this.cIm = mk(S);
    this.yFull = mk(N);
    this.yHalf = mk(N);
    this.sRe = mk(N);
    this.sIm = mk(N);
    this.y2 = mk(N);
    this.re = new Float64Array(size);
    this.im = new Float64Array(size);
    this.mean = Float64Array.from(this.rho.map((r) => r.reduce((a, b) => a + b, 0) / size));
    this.stats = { accepted: 0, rejected: 0, positivityRepairs: 0, largestRepair: 0, repairedMass: new Float64Array(field.M), repairReach: 0 };
    this.chamber = new Float64Array(field.grid.dims === 2 ? field.grid.points ** 2 : field.grid.points);
  }

  /** Spectra of the current state (ρ̂_m), for the reports. */
  spectra(): { re: Float64Array[]; im: Float64Array[] } {
    this.evaluate();
    return { re: this.rRe, im: this.rIm };
  }

  private evaluate(): void {
    if (this.fresh) return;
    this.field.explicit(this.rho, this.rRe, this.rIm, this.nRe, this.nIm, this.cRe, this.cIm);
    this.fresh = true;
  }

  /** One ETD1 step of size h from spectra (sRe, sIm) with explicit part (nRe, nIm), into real fields out. */
  private etd(sRe: Float64Array[], sIm: Float64Array[], nRe: Float64Array[], nIm: Float64Array[], h: number, out: Float64Array[]): void {
    const f = this.field;
    const re = this.re;
    const im = this.im;
    for (let a = 0; a < f.N; a++) {
      const D = f.dImplicit[a]!;
      const kappa = f.decay[a]!;
      const sr = sRe[a]!;
      const si = sIm[a]!;
      const nr = nRe[a]!;
      const ni = nIm[a]!;
      for (let i = 0; i < f.size; i++) {
        const z = (D * f.k2[i]! + kappa) * h;
        const e = Math.exp(-z);
        const phi = z === 0 ? h : (-Math.expm1(-z) / z) * h;
        re[i] = e * sr[i]! + phi * nr[i]!;
        im[i] = e * si[i]! + phi * ni[i]!;
      }
      f.inverseReal(re, im, out[a]!);
      f.symmetrise(out[a]!);
    }
  }

  /**
   * Try one step of size h. Returns the error ratio (≤ 1 accepted) and whether the step was taken.
   * `floor` is the step below which a negative density is repaired instead of retried.
   */
  tryStep(h: number, floor: number): { taken: boolean; err: number; negative: boolean } {
    const f = this.field;
    this.evaluate();
    this.etd(this.rRe, this.rIm, this.nRe, this.nIm, h, this.yFull);
    this.etd(this.rRe, this.rIm, this.nRe, this.nIm, h / 2, this.yHalf);
    // explicit part at the half step
    const save = this.rho;
    const hRho = this.yHalf;
    const tmpNRe = this.hRe;
    const tmpNIm = this.hIm;
    const sRe = this.sRe;
    const sIm = this.sIm;
    f.explicit(hRho, sRe, sIm, tmpNRe, tmpNIm, this.cRe, this.cIm);
    const y2 = this.y2;
    this.etd(sRe, sIm, tmpNRe, tmpNIm, h / 2, y2);
    // error: max over evolved fields of |y2 − y1| against tol × the field's fluctuation about its starting mean (floor
    // 1e-8 of that mean; a dynamic chemical with a zero mean: of its largest value)
    let err = 0;
    for (let a = 0; a < f.N; a++) {
      const mean = this.mean[a]!;
      const y1 = this.yFull[a]!;
      const yb = y2[a]!;
      let diff = 0;
      let fluct = 0;
      let largest = 0;
      for (let i = 0; i < f.size; i++) {
        diff = Math.max(diff, Math.abs(yb[i]! - y1[i]!));
        fluct = Math.max(fluct, Math.abs(yb[i]! - mean));
        largest = Math.max(largest, Math.abs(yb[i]!));
      }
      const scale = a < f.M ? mean : Math.max(Math.abs(mean), largest);
      if (scale === 0) continue;
      err = Math.max(err, diff / (this.tolerance * Math.max(fluct, 1e-8 * scale)));
    }
    if (!(err <= 1)) {
      this.stats.rejected++;
      return { taken: false, err: Number.isFinite(err) ? err : 1e6, negative: false };
    }
    // negative densities: larger ones (< −1e-9 of the mean) are a too-long step when the two half steps make clearly
    // less of them than the full step (retry with h/4); else, like rounding-level ones, they are repaired locally
    // (localRepair; counted as a repair when beyond rounding: the grid's resolution)
    let negFull = 0;
    let negHalf = 0;
    let negExtrap = false;
    let beyondRounding = false;
    for (let a = 0; a < f.M; a++) {
      const y1 = this.yFull[a]!;
      const yb = y2[a]!;
      const tiny = -1e-9 * this.mean[a]!;
      for (let i = 0; i < f.size; i++) {
        if (y1[i]! < 0) negFull -= y1[i]!;
        if (yb[i]! < 0) {
          negHalf -= yb[i]!;
          if (yb[i]! < tiny) beyondRounding = true;
        }
        if (2 * yb[i]! - y1[i]! < 0) negExtrap = true;
      }
    }
    if (beyondRounding && h > floor && negHalf < 0.5 * negFull) {
      this.stats.rejected++;
      return { taken: false, err, negative: true };
    }
    let repaired = false;
    for (let a = 0; a < f.N; a++) {
      const y1 = this.yFull[a]!;
      const yb = y2[a]!;
      if (!negExtrap) for (let i = 0; i < f.size; i++) yb[i] = 2 * yb[i]! - y1[i]!;
      else if (a < f.M && this.repair(a, yb)) repaired = true;
    }
    if (repaired) this.stats.positivityRepairs++;
    for (let a = 0; a < f.N; a++) save[a]!.set(y2[a]!);
    this.fresh = false;
    this.stats.accepted++;
    return { taken: true, err, negative: negHalf > 0 };
  }

  /**
   * Repair the negative values of species a's field v in place (globalRepair or localRepair on the chamber's cells; sealed walls:
   * the repaired chamber is mirrored back, so the extension stays exactly even) and book the mass moved.
   * Returns whether a value below −10⁻⁹ of the mean was moved. (Public for the tests; tryStep calls it.)
   */
  repair(a: number, v: Float64Array): boolean {
    const f = this.field;
    let any = false;
    for (let i = 0; i < v.length; i++) {
      if (v[i]! < 0) {
        any = true;
        break;
      }
    }
    if (!any) return false;
    const mean = this.mean[a]!;
    const { points, dims, mirror } = f.grid;
    const tiny = -1e-9 * mean;
    let r: { moved: number; beyond: number; reach: number };
    const fix = (w: Float64Array, periodic: boolean) => (this.repairMode === 'local' ? localRepair(w, points, dims, periodic, tiny) : globalRepair(w, points, tiny));
    if (mirror) {
      f.toChamber(v, this.chamber);
      r = fix(this.chamber, false);
      f.fromChamber(this.chamber, v);
    } else r = fix(v, true);
    const total = mean * this.chamber.length;
    const share = r.moved / Math.max(total, 1e-300);
    this.stats.repairedMass[a]! += share;
    this.stats.largestRepair = Math.max(this.stats.largestRepair, share);
    this.stats.repairReach = Math.max(this.stats.repairReach, r.reach);
    return r.beyond > 0;
  }
}
