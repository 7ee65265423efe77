/**
 * The characteristic polynomial of a small dense real matrix, and the
 * Routh–Hurwitz count of its roots in the right half-plane (docs/model.md §4).
 *
 * **Method.** A is first reduced to upper Hessenberg form H = Uᵀ A U by
 * Householder reflections (an orthogonal similarity, so det(λI − H) =
 * det(λI − A); the reduction is backward stable). The characteristic
 * polynomial of H then follows from expanding det(λI − H_j) of each leading
 * j×j block along its last column:
 *
 *     p_0 = 1,
 *     p_j(λ) = (λ − h_jj) p_{j−1}(λ) − Σ_{i<j} h_ij (h_{i+1,i} h_{i+2,i+1} ⋯ h_{j,j−1}) p_{i−1}(λ),
 *
 * (1-based), O(n³) operations on the coefficients. Faddeev–LeVerrier (traces
 * of powers) is not used: it loses digits quickly with n. Before the reduction
 * the matrix is divided by a power of two near its largest entry (exact), and
 * coefficient c_k is multiplied back by that power to the k-th (exact unless it
 * overflows).
 *
 * **Routh–Hurwitz.** For a real polynomial a_0 λⁿ + a_1 λⁿ⁻¹ + … + a_n with
 * a_0 > 0, the Routh array has first row (a_0, a_2, a_4, …), second row
 * (a_1, a_3, …), and each further row r from the two above it (u above v):
 * r_j = (v_0 u_{j+1} − u_0 v_{j+1}) / v_0. When no entry of the first column is
 * zero, the number of its sign changes equals the number of roots with
 * Re λ > 0 and no root lies on the imaginary axis. A zero in the first column
 * (a root on or symmetric about the imaginary axis, or an accident of the
 * coefficients) makes the table degenerate; `hurwitzUnstable` then answers
 * null instead of applying the ε or auxiliary-polynomial rules.
 *
 * Matrices are row-major `Float64Array`s of length n·n.
 */

/** Reusable work space for `charPoly` (size n). */
export interface CharPolyScratch {
  n: number;
  /** n·n: the matrix being reduced */
  h: Float64Array;
  /** (n+1)·(n+1): the leading-block polynomials p_0 … p_n (descending coefficients, row j holds p_j) */
  p: Float64Array;
  /** n: a Householder vector */
  v: Float64Array;
  /** n + 1: the answer (overwritten by every call with this scratch) */
  out: Float64Array;
}

export function charPolyScratch(n: number): CharPolyScratch {
  return { n, h: new Float64Array(n * n), p: new Float64Array((n + 1) * (n + 1)), v: new Float64Array(n), out: new Float64Array(n + 1) };
}

/** Householder reduction of h (n×n, in place) to upper Hessenberg form; v is work space of length n. */
function hessenberg(h: Float64Array, n: number, v: Float64Array): void {
  for (let k = 0; k < n - 2; k++) {
    // x = h[k+1.., k]; reflect it onto a multiple of e_1.
    let norm = 0;
    for (let i = k + 1; i < n; i++) norm = Math.hypot(norm, h[i * n + k]!);
    if (norm === 0) continue;
    const x0 = h[(k + 1) * n + k]!;
    const alpha = x0 > 0 ? -norm : norm; // sign opposite to x0: no cancellation in v_0 = x0 − alpha
    let vv = 0;
    for (let i = k + 1; i < n; i++) {
      v[i] = h[i * n + k]!;
      if (i === k + 1) v[i] = x0 - alpha;
      vv += v[i]! * v[i]!;
    }
    if (vv === 0) continue;
    const beta = 2 / vv;
    // left: rows k+1.. of h ← (I − β v vᵀ) h, columns k..
    for (let j = k; j < n; j++) {
      let s = 0;
      for (let i = k + 1; i < n; i++) s += v[i]! * h[i * n + j]!;
      s *= beta;
      for (let i = k + 1; i < n; i++) h[i * n + j]! -= s * v[i]!;
    }
    // right: columns k+1.. of h ← h (I − β v vᵀ), all rows
    for (let i = 0; i < n; i++) {
      let s = 0;
      for (let j = k + 1; j < n; j++) s += h[i * n + j]! * v[j]!;
      s *= beta;
      for (let j = k + 1; j < n; j++) h[i * n + j]! -= s * v[j]!;
    }
    // the column below the sub-diagonal is now zero up to rounding: set it exactly
    h[(k + 1) * n + k] = alpha;
    for (let i = k + 2; i < n; i++) h[i * n + k] = 0;
  }
}

/**
 * Coefficients of det(λI − A) = λⁿ + c_1 λⁿ⁻¹ + … + c_n, as [1, c_1, …, c_n].
 *
 * A is not changed. With `scratch` (from `charPolyScratch(n)`) nothing is
 * allocated and the answer is `scratch.out`, overwritten by the next call. A
 * non-finite entry gives NaN coefficients.
 *
 * @param a row-major n×n
 * @example charPoly(Float64Array.of(2, 0, 0, 3), 2) // [1, −5, 6]: (λ − 2)(λ − 3)
 */
export function charPoly(a: Float64Array, n: number, scratch?: CharPolyScratch): Float64Array {
  const w = scratch !== undefined && scratch.n === n ? scratch : charPolyScratch(n);
  const { h, p, v, out } = w;
  out[0] = 1;
  if (n === 0) return out;
  let big = 0;
  for (let i = 0; i < n * n; i++) {
    const x = a[i]!;
    if (!Number.isFinite(x)) {
      out.fill(Number.NaN, 1);
      return out;
    }
    big = Math.max(big, Math.abs(x));
  }
  if (big === 0) {
    out.fill(0, 1);
    return out;
  }
  const scale = 2 ** Math.round(Math.log2(big));
  for (let i = 0; i < n * n; i++) h[i] = a[i]! / scale;
  hessenberg(h, n, v);
  const w1 = n + 1; // row stride of p
  p.fill(0);
  p[0] = 1; // p_0 = 1
  for (let j = 1; j <= n; j++) {
    const row = j * w1;
    const prev = (j - 1) * w1;
    const hjj = h[(j - 1) * n + (j - 1)]!;
    // (λ − h_jj) p_{j−1}: descending coefficients of degree j
    p[row] = 1;
    for (let t = 1; t < j; t++) p[row + t] = p[prev + t]! - hjj * p[prev + t - 1]!;
    p[row + j] = -hjj * p[prev + j - 1]!;
    // − Σ_{i<j} h_ij (Π_{m=i}^{j−1} h_{m+1,m}) p_{i−1}   (1-based i; the product over sub-diagonals)
    let prod = 1;
    for (let i = j - 1; i >= 1; i--) {
      prod *= h[i * n + (i - 1)]!; // h_{i+1,i} in 1-based terms
      if (prod === 0) break; // every earlier term has the same zero factor
      const coef = h[(i - 1) * n + (j - 1)]! * prod;
      if (coef === 0) continue;
      // p_{i−1} has degree i−1; its λ^{i−1−t} coefficient sits at index j − i + 1 + t of degree j
      const src = (i - 1) * w1;
      for (let t = 0; t <= i - 1; t++) p[row + j - i + 1 + t]! -= coef * p[src + t]!;
    }
  }
  let f = 1;
  for (let t = 0; t <= n; t++) {
    out[t] = p[n * w1 + t]! * f;
    f *= scale;
  }
  return out;
}

/**
 * The number of roots with Re λ > 0 of a real polynomial with descending
 * coefficients `coeffs` (leading coefficient non-zero; either sign), by the
 * sign changes in the first column of its Routh array. Null when the table is
 * degenerate: a zero (or non-finite) entry in the first column, which includes
 * a root at 0 (c_n = 0) and any root pair on the imaginary axis.
 *
 * `work` (optional, length ≥ 3·(⌊n/2⌋ + 2)) avoids the one allocation.
 *
 * @example hurwitzUnstable(Float64Array.of(1, 3, 2)) // 0: (λ + 1)(λ + 2)
 * @example hurwitzUnstable(Float64Array.of(1, -1, -2)) // 1: (λ − 2)(λ + 1)
 */
export function hurwitzUnstable(coeffs: ArrayLike<number>, work?: Float64Array): number | null {
  const n = coeffs.length - 1;
  if (n < 0) return null;
  const lead = coeffs[0]!;
  if (!(lead !== 0) || !Number.isFinite(lead)) return null;
  if (n === 0) return 0;
  const width = Math.floor(n / 2) + 2;
  // u: the row two above, v: the row above (padded with zeros); a negative leading coefficient flips every sign
  const buf = work !== undefined && work.length >= 3 * width ? work : new Float64Array(3 * width);
  buf.fill(0, 0, 3 * width);
  let u = buf.subarray(0, width);
  let v = buf.subarray(width, 2 * width);
  let r = buf.subarray(2 * width, 3 * width);
  const sign = lead > 0 ? 1 : -1;
  for (let j = 0; 2 * j <= n; j++) u[j] = sign * coeffs[2 * j]!;
  for (let j = 0; 2 * j + 1 <= n; j++) v[j] = sign * coeffs[2 * j + 1]!;
  let changes = 0;
  let prevSign = 1;
  for (let row = 1; row <= n; row++) {
    const v0 = v[0]!;
    if (!(v0 !== 0) || !Number.isFinite(v0)) return null;
    const s = v0 > 0 ? 1 : -1;
    if (s !== prevSign) changes++;
    prevSign = s;
    if (row === n) break;
    // next row: r_j = (v0 u_{j+1} − u0 v_{j+1}) / v0
    const u0 = u[0]!;
    for (let j = 0; j < width - 1; j++) r[j] = (v0 * u[j + 1]! - u0 * v[j + 1]!) / v0;
    r[width - 1] = 0;
    const t = u;
    u = v;
    v = r;
    r = t;
  }
  return changes;
}
