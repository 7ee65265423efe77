/**
 * The radix-2 FFT of the simulation (server/engine/simulate/fft.ts; Cooley & Tukey,
 * Math. Comp. 19 (1965) 297) against the discrete Fourier transform computed
 * directly from its definition X_k = Σ_j x_j e^{−2πi jk/n} (an independent O(n²) sum),
 * and the 2D transform against the same definition in two dimensions.
 */
import { describe, expect, it } from 'vitest';
import { FFT, FFTGrid } from '../../server/engine/simulate/fft.js';
import { Random } from '../../server/engine/random.js';

function directDft(re: Float64Array, im: Float64Array): { re: Float64Array; im: Float64Array } {
  const n = re.length;
  const outRe = new Float64Array(n);
  const outIm = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    let sr = 0;
    let si = 0;
    for (let j = 0; j < n; j++) {
      const a = (-2 * Math.PI * ((j * k) % n)) / n;
      sr += re[j]! * Math.cos(a) - im[j]! * Math.sin(a);
      si += re[j]! * Math.sin(a) + im[j]! * Math.cos(a);
    }
    outRe[k] = sr;
    outIm[k] = si;
  }
  return { re: outRe, im: outIm };
}

describe('radix-2 FFT', () => {
  const rng = new Random(15);
  for (const n of [1, 2, 4, 8, 64, 512]) {
    it(`matches the direct DFT at n = ${n}, and the inverse returns the input`, () => {
      const re = Float64Array.from({ length: n }, () => rng.normal());
      const im = Float64Array.from({ length: n }, () => rng.normal());
      const ref = directDft(re, im);
      const fr = Float64Array.from(re);
      const fi = Float64Array.from(im);
      new FFT(n).transform(fr, fi);
      let scale = 0;
      let err = 0;
      for (let k = 0; k < n; k++) {
        scale = Math.max(scale, Math.hypot(ref.re[k]!, ref.im[k]!));
        err = Math.max(err, Math.hypot(fr[k]! - ref.re[k]!, fi[k]! - ref.im[k]!));
      }
      expect(err / scale).toBeLessThan(1e-12);
      new FFT(n).transform(fr, fi, true);
      for (let j = 0; j < n; j++) {
        expect(Math.abs(fr[j]! - re[j]!)).toBeLessThan(1e-12);
        expect(Math.abs(fi[j]! - im[j]!)).toBeLessThan(1e-12);
      }
    });
  }

  it('refuses a size that is not a power of two', () => {
    expect(() => new FFT(12)).toThrow(/power of two/);
  });

  it('in 2D matches the two-dimensional DFT definition', () => {
    const nx = 8;
    const ny = 4;
    const re = Float64Array.from({ length: nx * ny }, () => rng.normal());
    const im = new Float64Array(nx * ny);
    const fr = Float64Array.from(re);
    const fi = Float64Array.from(im);
    new FFTGrid(nx, ny).transform(fr, fi);
    for (let ky = 0; ky < ny; ky++) {
      for (let kx = 0; kx < nx; kx++) {
        let sr = 0;
        let si = 0;
        for (let y = 0; y < ny; y++) {
          for (let x = 0; x < nx; x++) {
            const a = -2 * Math.PI * ((x * kx) / nx + (y * ky) / ny);
            sr += re[y * nx + x]! * Math.cos(a);
            si += re[y * nx + x]! * Math.sin(a);
          }
        }
        expect(fr[ky * nx + kx]).toBeCloseTo(sr, 10);
        expect(fi[ky * nx + kx]).toBeCloseTo(si, 10);
      }
    }
  });
});
