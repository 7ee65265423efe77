/**
 * Eigenvalues and eigenvectors of small dense real non-symmetric matrices.
 *
 * Matrices are row-major `Float64Array`s of length n·n (`a[i * n + j]` is row i,
 * column j). The routine is the classic three-stage one:
 *
 *  1. balancing by powers of two (a diagonal similarity D⁻¹AD that equalises
 *     row and column norms, exact in floating point);
 *  2. reduction to upper Hessenberg form by stabilised elementary similarity
 *     transformations (Gaussian elimination with partial pivoting);
 *  3. the Francis implicit double-shift QR iteration on the Hessenberg matrix,
 *     with deflation on negligible sub-diagonal entries and exceptional shifts
 *     after 10, 20, … iterations without deflation.
 *
 * (Wilkinson & Reinsch, *Handbook for Automatic Computation* vol. II, and
 * Golub & Van Loan, *Matrix Computations* §7.5.) Eigenvectors are found by
 * inverse iteration on the original matrix in complex arithmetic, so they are
 * independent of the QR stage.
 *
 * Non-convergence is a result (`converged: false`), not a throw.
 */
import { swapRows } from './dense.js';

export interface Spectrum {
  /** Real parts, length n. Complex pairs are adjacent, positive imaginary part first. */
  re: Float64Array;
  /** Imaginary parts, length n. */
  im: Float64Array;
  /** False when the QR iteration ran out of iterations; the values found so far are NaN-free but incomplete (NaN for the rest). */
  converged: boolean;
}

const RADIX = 2;

/** In-place balancing (power-of-two diagonal similarity). */
function balance(a: Float64Array, n: number): void {
  const sqrdx = RADIX * RADIX;
  let done = false;
  let sweeps = 0;
  while (!done && sweeps < 100) {
    done = true;
    sweeps++;
    for (let i = 0; i < n; i++) {
      let r = 0;
      let c = 0;
      for (let j = 0; j < n; j++) {
        if (j !== i) {
          c += Math.abs(a[j * n + i]!);
          r += Math.abs(a[i * n + j]!);
        }
      }
      if (c !== 0 && r !== 0) {
        let g = r / RADIX;
        let f = 1;
        const s = c + r;
        while (c < g) {
          f *= RADIX;
          c *= sqrdx;
        }
        g = r * RADIX;
        while (c > g) {
          f /= RADIX;
          c /= sqrdx;
        }
        if ((c + r) / f < 0.95 * s) {
          done = false;
          const ginv = 1 / f;
          for (let j = 0; j < n; j++) a[i * n + j]! *= ginv;
          for (let j = 0; j < n; j++) a[j * n + i]! *= f;
        }
      }
    }
  }
}

/** In-place reduction to upper Hessenberg form by stabilised elimination; zeros below the sub-diagonal. */
function hessenberg(a: Float64Array, n: number): void {
  for (let m = 1; m < n - 1; m++) {
    let x = 0;
    let piv = m;
    for (let j = m; j < n; j++) {
      const v = a[j * n + m - 1]!;
      if (Math.abs(v) > Math.abs(x)) {
        x = v;
        piv = j;
      }
    }
    if (piv !== m) {
      // (columns before m − 1 are already zero in both rows)
      swapRows(a, n, piv, m);
      for (let j = 0; j < n; j++) {
        const t = a[j * n + piv]!;
        a[j * n + piv] = a[j * n + m]!;
        a[j * n + m] = t;
      }
    }
    if (x !== 0) {
      for (let i = m + 1; i < n; i++) {
        let y = a[i * n + m - 1]!;
        if (y !== 0) {
          y /= x;
          a[i * n + m - 1] = 0;
          for (let j = m; j < n; j++) a[i * n + j]! -= y * a[m * n + j]!;
          for (let j = 0; j < n; j++) a[j * n + m]! += y * a[j * n + i]!;
        }
      }
    }
  }
  for (let i = 2; i < n; i++) for (let j = 0; j < i - 1; j++) a[i * n + j] = 0;
}

const sign = (a: number, b: number) => (b >= 0 ? Math.abs(a) : -Math.abs(a));

/** Francis double-shift QR on an upper Hessenberg matrix (destroyed). */
function hessenbergQR(a: Float64Array, n: number, wr: Float64Array, wi: Float64Array, maxIts: number): boolean {
  const A = (i: number, j: number) => a[i * n + j]!;
  const set = (i: number, j: number, v: number) => {
    a[i * n + j] = v;
  };
  let anorm = 0;
  for (let i = 0; i < n; i++) for (let j = Math.max(i - 1, 0); j < n; j++) anorm += Math.abs(A(i, j));
  let nn = n - 1;
  let t = 0;
  let p = 0;
  let q = 0;
  let r = 0;
  let s = 0;
  let w = 0;
  let x = 0;
  let y = 0;
  let z = 0;
  while (nn >= 0) {
    let its = 0;
    let l: number;
    do {
      for (l = nn; l >= 1; l--) {
        s = Math.abs(A(l - 1, l - 1)) + Math.abs(A(l, l));
        if (s === 0) s = anorm;
        if (Math.abs(A(l, l - 1)) + s === s) {
          set(l, l - 1, 0);
          break;
        }
      }
      x = A(nn, nn);
      if (l === nn) {
        wr[nn] = x + t;
        wi[nn] = 0;
        nn--;
      } else {
        y = A(nn - 1, nn - 1);
        w = A(nn, nn - 1) * A(nn - 1, nn);
        if (l === nn - 1) {
          p = 0.5 * (y - x);
          q = p * p + w;
          z = Math.sqrt(Math.abs(q));
          x += t;
          if (q >= 0) {
            z = p + sign(z, p);
            wr[nn - 1] = wr[nn] = x + z;
            if (z !== 0) wr[nn] = x - w / z;
            wi[nn - 1] = wi[nn] = 0;
          } else {
            wr[nn - 1] = wr[nn] = x + p;
            wi[nn - 1] = z;
            wi[nn] = -z;
          }
          nn -= 2;
        } else {
          if (its >= maxIts) {
            for (let i = 0; i <= nn; i++) {
              wr[i] = Number.NaN;
              wi[i] = Number.NaN;
            }
            return false;
          }
          if (its > 0 && its % 10 === 0) {
            t += x;
            for (let i = 0; i <= nn; i++) set(i, i, A(i, i) - x);
            s = Math.abs(A(nn, nn - 1)) + Math.abs(A(nn - 1, nn - 2));
            y = x = 0.75 * s;
            w = -0.4375 * s * s;
          }
          ++its;
          let m: number;
          for (m = nn - 2; m >= l; m--) {
            z = A(m, m);
            r = x - z;
            s = y - z;
            p = (r * s - w) / A(m + 1, m) + A(m, m + 1);
            q = A(m + 1, m + 1) - z - r - s;
            r = A(m + 2, m + 1);
            s = Math.abs(p) + Math.abs(q) + Math.abs(r);
            p /= s;
            q /= s;
            r /= s;
            if (m === l) break;
            const u = Math.abs(A(m, m - 1)) * (Math.abs(q) + Math.abs(r));
            const v = Math.abs(p) * (Math.abs(A(m - 1, m - 1)) + Math.abs(z) + Math.abs(A(m + 1, m + 1)));
            if (u + v === v) break;
          }
          for (let i = m + 2; i <= nn; i++) {
            set(i, i - 2, 0);
            if (i !== m + 2) set(i, i - 3, 0);
          }
          for (let k = m; k <= nn - 1; k++) {
            if (k !== m) {
              p = A(k, k - 1);
              q = A(k + 1, k - 1);
              r = 0;
              if (k !== nn - 1) r = A(k + 2, k - 1);
              x = Math.abs(p) + Math.abs(q) + Math.abs(r);
              if (x !== 0) {
                p /= x;
                q /= x;
                r /= x;
              }
            }
            s = sign(Math.sqrt(p * p + q * q + r * r), p);
            if (s !== 0) {
              if (k === m) {
                if (l !== m) set(k, k - 1, -A(k, k - 1));
              } else {
                set(k, k - 1, -s * x);
              }
              p += s;
              x = p / s;
              y = q / s;
              z = r / s;
              q /= p;
              r /= p;
              for (let j = k; j <= nn; j++) {
                p = A(k, j) + q * A(k + 1, j);
                if (k !== nn - 1) {
                  p += r * A(k + 2, j);
                  set(k + 2, j, A(k + 2, j) - p * z);
                }
                set(k + 1, j, A(k + 1, j) - p * y);
                set(k, j, A(k, j) - p * x);
              }
              const mmin = nn < k + 3 ? nn : k + 3;
              for (let i = l; i <= mmin; i++) {
                p = x * A(i, k) + y * A(i, k + 1);
                if (k !== nn - 1) {
                  p += z * A(i, k + 2);
                  set(i, k + 2, A(i, k + 2) - p * r);
                }
                set(i, k + 1, A(i, k + 1) - p * q);
                set(i, k, A(i, k) - p);
              }
            }
          }
        }
      }
    } while (l < nn - 1);
  }
  return true;
}

/**
 * All eigenvalues of a real n×n matrix (row-major, not modified).
 *
 * @param a   row-major n×n matrix
 * @param n   order
 * @param maxIterations QR iterations allowed per eigenvalue (default 60)
 * @returns real and imaginary parts, complex pairs adjacent with +Im first;
 *          `converged: false` if the iteration budget ran out.
 * @example eigenvalues(Float64Array.of(0, 1, -1, 0), 2) // ±i
 */
export function eigenvalues(a: Float64Array, n: number, maxIterations = 60): Spectrum {
  const re = new Float64Array(n);
  const im = new Float64Array(n);
  if (n === 0) return { re, im, converged: true };
  for (let i = 0; i < n * n; i++) {
    if (!Number.isFinite(a[i]!)) {
      re.fill(Number.NaN);
      im.fill(Number.NaN);
      return { re, im, converged: false };
    }
  }
  if (n === 1) {
    re[0] = a[0]!;
    return { re, im, converged: true };
  }
  const h = Float64Array.from(a);
  balance(h, n);
  hessenberg(h, n);
  const ok = hessenbergQR(h, n, re, im, maxIterations);
  // Order each complex pair with the positive imaginary part first.
  for (let i = 0; i + 1 < n; i++) {
    if (im[i] !== 0 && im[i]! < 0 && im[i + 1] === -im[i]! && re[i] === re[i + 1]) {
      im[i] = -im[i]!;
      im[i + 1] = -im[i + 1]!;
      i++;
    } else if (im[i] !== 0) {
      i++;
    }
  }
  return { re, im, converged: ok };
}

/** Complex vector as separate real and imaginary parts. */
export interface ComplexVector {
  re: Float64Array;
  im: Float64Array;
}

/**
 * Eigenvector of a real matrix for a known eigenvalue λ = lr + i·li, by inverse
 * iteration: solve (A − λI) x_{j+1} = x_j with complex LU and partial pivoting,
 * replacing an exactly singular pivot by ε‖A‖ (the eigenvalue is exact to
 * rounding, so the solve amplifies the wanted direction by ~1/ε).
 *
 * @returns the vector normalised so that its largest-modulus component is 1 (real)
 */
export function eigenvector(a: Float64Array, n: number, lr: number, li: number, iterations = 3): ComplexVector {
  let norm = 0;
  for (let i = 0; i < n * n; i++) norm = Math.max(norm, Math.abs(a[i]!));
  const tiny = Math.max(norm, Math.abs(lr) + Math.abs(li), Number.MIN_VALUE) * 1e-15;
  // LU of B = A − λI (complex), row-major.
  const br = Float64Array.from(a);
  const bi = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    br[i * n + i]! -= lr;
    bi[i * n + i] = -li;
  }
  const perm = new Int32Array(n);
  for (let k = 0; k < n; k++) {
    let best = -1;
    let piv = k;
    for (let i = k; i < n; i++) {
      const m = Math.hypot(br[i * n + k]!, bi[i * n + k]!);
      if (m > best) {
        best = m;
        piv = i;
      }
    }
    perm[k] = piv;
    if (piv !== k) {
      swapRows(br, n, k, piv);
      swapRows(bi, n, k, piv);
    }
    if (Math.hypot(br[k * n + k]!, bi[k * n + k]!) < tiny) {
      br[k * n + k] = tiny;
      bi[k * n + k] = 0;
    }
    const pr = br[k * n + k]!;
    const pi = bi[k * n + k]!;
    const pd = pr * pr + pi * pi;
    for (let i = k + 1; i < n; i++) {
      // l = b[i][k] / pivot
      const xr = br[i * n + k]!;
      const xi = bi[i * n + k]!;
      const lr_ = (xr * pr + xi * pi) / pd;
      const li_ = (xi * pr - xr * pi) / pd;
      br[i * n + k] = lr_;
      bi[i * n + k] = li_;
      for (let j = k + 1; j < n; j++) {
        const ur = br[k * n + j]!;
        const ui = bi[k * n + j]!;
        br[i * n + j]! -= lr_ * ur - li_ * ui;
        bi[i * n + j]! -= lr_ * ui + li_ * ur;
      }
    }
  }
  // Start vector: deterministic, not aligned with any coordinate axis.
  let xr = new Float64Array(n);
  let xi = new Float64Array(n);
  for (let i = 0; i < n; i++) xr[i] = 1 + 0.1 * Math.sin(i + 1);
  for (let it = 0; it < iterations; it++) {
    const yr = Float64Array.from(xr);
    const yi = Float64Array.from(xi);
    for (let k = 0; k < n; k++) {
      const p = perm[k]!;
      if (p !== k) {
        swapRows(yr, 1, k, p);
        swapRows(yi, 1, k, p);
      }
      for (let i = k + 1; i < n; i++) {
        const lr_ = br[i * n + k]!;
        const li_ = bi[i * n + k]!;
        yr[i]! -= lr_ * yr[k]! - li_ * yi[k]!;
        yi[i]! -= lr_ * yi[k]! + li_ * yr[k]!;
      }
    }
    for (let i = n - 1; i >= 0; i--) {
      let sr = yr[i]!;
      let si = yi[i]!;
      for (let j = i + 1; j < n; j++) {
        const ur = br[i * n + j]!;
        const ui = bi[i * n + j]!;
        sr -= ur * yr[j]! - ui * yi[j]!;
        si -= ur * yi[j]! + ui * yr[j]!;
      }
      const pr = br[i * n + i]!;
      const pi = bi[i * n + i]!;
      const pd = pr * pr + pi * pi;
      yr[i] = (sr * pr + si * pi) / pd;
      yi[i] = (si * pr - sr * pi) / pd;
    }
    normaliseInPlace(yr, yi);
    xr = yr;
    xi = yi;
  }
  return { re: xr, im: xi };
}

/** Scale so that the largest-modulus component becomes exactly 1 + 0i. */
function normaliseInPlace(vr: Float64Array, vi: Float64Array): void {
  let best = -1;
  let k = 0;
  for (let i = 0; i < vr.length; i++) {
    const m = Math.hypot(vr[i]!, vi[i]!);
    if (m > best) {
      best = m;
      k = i;
    }
  }
  const pr = vr[k]!;
  const pi = vi[k]!;
  const pd = pr * pr + pi * pi;
  if (!(pd > 0) || !Number.isFinite(pd)) return;
  for (let i = 0; i < vr.length; i++) {
    const a = vr[i]!;
    const b = vi[i]!;
    vr[i] = (a * pr + b * pi) / pd;
    vi[i] = (b * pr - a * pi) / pd;
  }
  vr[k] = 1;
  vi[k] = 0;
}

/** Relative residual ‖Av − λv‖ / (‖A‖_F ‖v‖) of an eigenpair. */
export function eigenResidual(a: Float64Array, n: number, lr: number, li: number, v: ComplexVector): number {
  let num = 0;
  let vn = 0;
  let an = 0;
  for (let i = 0; i < n * n; i++) an += a[i]! * a[i]!;
  for (let i = 0; i < n; i++) {
    let sr = 0;
    let si = 0;
    for (let j = 0; j < n; j++) {
      sr += a[i * n + j]! * v.re[j]!;
      si += a[i * n + j]! * v.im[j]!;
    }
    sr -= lr * v.re[i]! - li * v.im[i]!;
    si -= lr * v.im[i]! + li * v.re[i]!;
    num += sr * sr + si * si;
    vn += v.re[i]! * v.re[i]! + v.im[i]! * v.im[i]!;
  }
  return Math.sqrt(num) / (Math.sqrt(an) * Math.sqrt(vn) || 1);
}
