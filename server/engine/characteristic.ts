/**
 * The characteristic function through the Weinstein–Aronszajn identity
 * (docs/model.md §3): for J = −k²[diag(D) + P G Qᵀ] (no crowding),
 *
 *   det(λ − J) = Π_m (λ + k² D_m) · det( I_S + k² G Qᵀ (λ + k² diag(D))⁻¹ P ),
 *
 * so every eigenvalue λ that is not a pole −k² D_m makes the S×S determinant
 * vanish. This file evaluates that S×S determinant at a complex λ (scaled
 * units), which the tests use to check computed eigenvalues on rank-S cases.
 */
import { swapRows } from './linalg/dense.js';
import { chemicalResponse, type ScaledModel } from './model.js';

/** Complex determinant of an S×S matrix (row-major re/im), by Gaussian elimination with pivoting. */
function complexDet(re: Float64Array, im: Float64Array, n: number): { re: number; im: number } {
  let dr = 1;
  let di = 0;
  for (let k = 0; k < n; k++) {
    let piv = k;
    for (let i = k + 1; i < n; i++) if (Math.hypot(re[i * n + k]!, im[i * n + k]!) > Math.hypot(re[piv * n + k]!, im[piv * n + k]!)) piv = i;
    if (piv !== k) {
      swapRows(re, n, k, piv);
      swapRows(im, n, k, piv);
      dr = -dr;
      di = -di;
    }
    const pr = re[k * n + k]!;
    const pi = im[k * n + k]!;
    const nr = dr * pr - di * pi;
    di = dr * pi + di * pr;
    dr = nr;
    const pd = pr * pr + pi * pi;
    if (pd === 0) return { re: 0, im: 0 };
    for (let i = k + 1; i < n; i++) {
      const xr = re[i * n + k]!;
      const xi = im[i * n + k]!;
      const fr = (xr * pr + xi * pi) / pd;
      const fi = (xi * pr - xr * pi) / pd;
      for (let j = k; j < n; j++) {
        const ur = re[k * n + j]!;
        const ui = im[k * n + j]!;
        re[i * n + j]! -= fr * ur - fi * ui;
        im[i * n + j]! -= fr * ui + fi * ur;
      }
    }
  }
  return { re: dr, im: di };
}

/**
 * det(I_S + [k²G Qᵀ] (λ + k² diag(D))⁻¹ P) at complex λ = lr + i·li, scaled units,
 * together with a scale (1 + the largest |entry| of the update) to judge how close to zero it is.
 * Requires a model without crowding (diagonal diffusion).
 */
export function reducedCharacteristic(model: ScaledModel, k: number, lr: number, li: number): { re: number; im: number; scale: number } {
  if (model.crowding) throw new Error('reducedCharacteristic needs a diagonal diffusion matrix');
  const { M, S } = model;
  const X = chemicalResponse(model, k); // S×M: k² G Qᵀ
  if (X === null) throw new Error('singular chemical response');
  const k2 = k * k;
  const re = new Float64Array(S * S);
  const im = new Float64Array(S * S);
  let scale = 1;
  for (let s = 0; s < S; s++) {
    for (let t = 0; t < S; t++) {
      let ar = 0;
      let ai = 0;
      for (let m = 0; m < M; m++) {
        // X[s,m] P[m,t] / (λ + k² D_m)
        const dr = lr + k2 * model.diffusivity[m]!;
        const di = li;
        const d2 = dr * dr + di * di;
        const num = X[s * M + m]! * model.P[m * S + t]!;
        ar += (num * dr) / d2;
        ai += (-num * di) / d2;
        scale = Math.max(scale, Math.abs(num) / Math.sqrt(d2));
      }
      re[s * S + t] = ar + (s === t ? 1 : 0);
      im[s * S + t] = ai;
    }
  }
  const d = complexDet(re, im, S);
  return { ...d, scale };
}
