/**
 * A radix-2 complex fast Fourier transform, written from the published
 * description of the algorithm (Cooley & Tukey, Math. Comp. 19 (1965) 297–301):
 * iterative decimation in time, the input put in bit-reversed order first, then
 * log₂ n passes of butterflies with precomputed twiddle factors. Tested against a
 * direct O(n²) DFT (tests/engine/simulate-fft.test.ts).
 *
 * Conventions: forward X_k = Σ_j x_j e^{−2πi jk/n}; the inverse carries the 1/n,
 * so inverse(forward(x)) = x. Data are split arrays (re, im), transformed in place.
 * Why written here rather than taken from npm: DEVELOPERS.md (simulation).
 */

export class FFT {
  readonly n: number;
  private readonly rev: Uint32Array;
  private readonly cos: Float64Array;
  private readonly sin: Float64Array;

  constructor(n: number) {
    if (!Number.isInteger(n) || n < 1 || (n & (n - 1)) !== 0) throw new RangeError(`FFT size must be a power of two, got ${n}`);
    this.n = n;
    let bits = 0;
    while (1 << bits < n) bits++;
    this.rev = new Uint32Array(n);
    for (let i = 0; i < n; i++) {
      let r = 0;
      for (let b = 0; b < bits; b++) if (i & (1 << b)) r |= 1 << (bits - 1 - b);
      this.rev[i] = r;
    }
    // twiddles e^{−2πi j/n} for j < n/2, each computed directly (no recurrence: no drift)
    this.cos = new Float64Array(Math.max(1, n / 2));
    this.sin = new Float64Array(Math.max(1, n / 2));
    for (let j = 0; j < n / 2; j++) {
      this.cos[j] = Math.cos((2 * Math.PI * j) / n);
      this.sin[j] = -Math.sin((2 * Math.PI * j) / n);
    }
  }

  /** In-place transform of n values at re[off + j·stride], im[off + j·stride]. */
  transform(re: Float64Array, im: Float64Array, inverse = false, off = 0, stride = 1): void {
    const n = this.n;
    const rev = this.rev;
    for (let i = 0; i < n; i++) {
      const j = rev[i]!;
      if (j > i) {
        const a = off + i * stride;
        const b = off + j * stride;
        let t = re[a]!;
        re[a] = re[b]!;
        re[b] = t;
        t = im[a]!;
        im[a] = im[b]!;
        im[b] = t;
      }
    }
    const sgn = inverse ? -1 : 1;
    for (let size = 2; size <= n; size <<= 1) {
      const half = size >> 1;
      const step = n / size;
      for (let start = 0; start < n; start += size) {
        for (let j = 0; j < half; j++) {
          const wr = this.cos[j * step]!;
          const wi = sgn * this.sin[j * step]!;
          const a = off + (start + j) * stride;
          const b = a + half * stride;
          const xr = re[b]! * wr - im[b]! * wi;
          const xi = re[b]! * wi + im[b]! * wr;
          re[b] = re[a]! - xr;
          im[b] = im[a]! - xi;
          re[a]! += xr;
          im[a]! += xi;
        }
      }
    }
    if (inverse) {
      const s = 1 / n;
      for (let i = 0; i < n; i++) {
        re[off + i * stride]! *= s;
        im[off + i * stride]! *= s;
      }
    }
  }
}

/**
 * A 1D (ny = 1) or 2D (nx × ny, row-major with x fastest) transform built from
 * 1D passes along each axis (the 2D DFT is separable).
 */
export class FFTGrid {
  readonly fx: FFT;
  readonly fy: FFT | null;
  readonly size: number;
  private readonly colRe: Float64Array;
  private readonly colIm: Float64Array;
  constructor(
    readonly nx: number,
    readonly ny: number,
  ) {
    this.fx = new FFT(nx);
    this.fy = ny > 1 ? new FFT(ny) : null;
    this.size = nx * ny;
    this.colRe = new Float64Array(ny);
    this.colIm = new Float64Array(ny);
  }

  /** In place; `inverse` includes the 1/(nx·ny). */
  transform(re: Float64Array, im: Float64Array, inverse = false): void {
    for (let y = 0; y < this.ny; y++) this.fx.transform(re, im, inverse, y * this.nx, 1);
    if (!this.fy) return;
    // columns through a contiguous copy (strided access is slow on large grids)
    const cr = this.colRe;
    const ci = this.colIm;
    const nx = this.nx;
    for (let x = 0; x < nx; x++) {
      for (let y = 0; y < this.ny; y++) {
        cr[y] = re[y * nx + x]!;
        ci[y] = im[y * nx + x]!;
      }
      this.fy.transform(cr, ci, inverse);
      for (let y = 0; y < this.ny; y++) {
        re[y * nx + x] = cr[y]!;
        im[y * nx + x] = ci[y]!;
      }
    }
  }
}
