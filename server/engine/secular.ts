/**
 * The rank-one path (one chemical, no crowding) of docs/model.md §3.
 *
 * With s_m = ρ_m μ_m α_m and g(k) = 1/(D_c k² + κ), the Jacobian
 * J = −k² diag(D) − k² g ρμ αᵀ is diagonal plus rank one, and by the matrix
 * determinant lemma its eigenvalues (other than poles of decoupled species)
 * solve the secular equation
 *
 *     F(λ) = 1 + Σ_m c_m / (λ − p_m) = 0,   c_m = k² g s_m,  p_m = −k² D_m.
 *
 * When all non-zero c_m share a sign, F is monotone between its poles, every
 * root is real and the roots interlace the poles; the largest root is then
 * found by a safeguarded Newton–bisection in a variable measured from the
 * nearest pole (no cancellation near the pole). Mixed signs can give complex
 * pairs and go to the general eigen routine.
 *
 * Works in whatever consistent units the caller uses (the engine passes
 * scaled ones).
 */

/** Secular function F(λ) for real λ. */
export function secularFunction(c: ArrayLike<number>, poles: ArrayLike<number>, lambda: number): number {
  let f = 1;
  for (let m = 0; m < c.length; m++) f += c[m]! / (lambda - poles[m]!);
  return f;
}

/**
 * Relative residual of the secular equation at a complex λ:
 * |F(λ)| / (1 + Σ |c_m / (λ − p_m)|). Zero for an exact root; rounding-level for a computed one.
 */
export function secularResidual(c: ArrayLike<number>, poles: ArrayLike<number>, lr: number, li: number): number {
  let fr = 1;
  let fi = 0;
  let scale = 1;
  for (let m = 0; m < c.length; m++) {
    const dr = lr - poles[m]!;
    const di = li;
    const d2 = dr * dr + di * di;
    const tr = (c[m]! * dr) / d2;
    const ti = (-c[m]! * di) / d2;
    fr += tr;
    fi += ti;
    scale += Math.hypot(tr, ti);
  }
  return Math.hypot(fr, fi) / scale;
}

/** Whether all non-zero weights share one sign (the real-root case). */
export function sameSign(c: ArrayLike<number>): boolean {
  let pos = false;
  let neg = false;
  for (let m = 0; m < c.length; m++) {
    if (c[m]! > 0) pos = true;
    else if (c[m]! < 0) neg = true;
  }
  return !(pos && neg);
}

/** Root of an increasing function on (lo, hi) with f(lo+) < 0 < f(hi−); safeguarded Newton–bisection. */
function increasingRoot(f: (x: number) => { v: number; d: number }, lo: number, hi: number): number {
  let x = 0.5 * (lo + hi);
  for (let it = 0; it < 200; it++) {
    const { v, d } = f(x);
    if (v === 0) return x;
    if (v < 0) lo = x;
    else hi = x;
    if (hi - lo <= 4 * Number.EPSILON * Math.max(Math.abs(lo), Math.abs(hi))) break;
    let next = x - v / d;
    if (!(next > lo && next < hi) || !Number.isFinite(next)) next = 0.5 * (lo + hi);
    if (next === x) break;
    x = next;
  }
  return x;
}

/**
 * Largest eigenvalue of diag(poles) + (rank-one part) when the weights share a sign:
 * the largest root of F, or a pole that stays an eigenvalue (a decoupled species,
 * or a pole shared by several coupled species), whichever is larger.
 *
 * @param c     weights c_m (one sign or zero)
 * @param poles p_m (any order)
 * @returns the largest (real) eigenvalue
 * @example largestSecularRoot([-1], [-2]) // −1: λ = p + c for one species
 */
export function largestSecularRoot(c: ArrayLike<number>, poles: ArrayLike<number>): number {
  const n = c.length;
  let p1 = -Infinity;
  let total = 0;
  let positive = false;
  let leftover = -Infinity;
  for (let m = 0; m < n; m++) {
    if (c[m] !== 0) {
      p1 = Math.max(p1, poles[m]!);
      total += Math.abs(c[m]!);
      if (c[m]! > 0) positive = true;
    } else {
      leftover = Math.max(leftover, poles[m]!);
    }
  }
  if (p1 === -Infinity) return leftover;
  let coupledAtP1 = 0;
  let p2 = -Infinity;
  for (let m = 0; m < n; m++) {
    if (c[m] === 0) continue;
    if (poles[m] === p1) coupledAtP1++;
    else p2 = Math.max(p2, poles[m]!);
  }
  if (coupledAtP1 > 1) leftover = Math.max(leftover, p1);
  let root: number;
  if (!positive) {
    // λ = p1 + δ, δ ∈ (0, Σ|c|]; F(δ) = 1 + Σ c_m/(δ + p1 − p_m), increasing.
    const F = (d: number) => {
      let v = 1;
      let dv = 0;
      for (let m = 0; m < n; m++) {
        if (c[m] === 0) continue;
        const den = d + (p1 - poles[m]!);
        v += c[m]! / den;
        dv -= c[m]! / (den * den);
      }
      return { v, d: dv };
    };
    root = p1 + increasingRoot(F, 0, total);
  } else {
    // λ = p1 − δ, δ ∈ (0, min(p1 − p2, Σc)]; F(δ) = 1 + Σ c_m/(p1 − δ − p_m), increasing in δ.
    const hi = Math.min(p2 === -Infinity ? total : p1 - p2, total);
    const F = (d: number) => {
      let v = 1;
      let dv = 0;
      for (let m = 0; m < n; m++) {
        if (c[m] === 0) continue;
        const den = p1 - poles[m]! - d;
        v += c[m]! / den;
        dv += c[m]! / (den * den);
      }
      return { v, d: dv };
    };
    const Fhi = F(hi).v;
    root = Fhi <= 0 ? p1 - hi : p1 - increasingRoot(F, 0, hi);
  }
  return Math.max(root, leftover);
}
