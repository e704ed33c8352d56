// Eigenvalues and eigenvectors of a small symmetric matrix by the cyclic
// Jacobi method (Golub and Van Loan, Matrix Computations, 4th ed., 2013,
// §8.5): plane rotations annihilate the off-diagonal entries until they are
// negligible against the diagonal.
import type { SymMatrix } from "./linalg.js";

/** A = V·diag(values)·Vᵀ; vectors holds V row-major (column k is the k-th eigenvector). */
export function symmetricEigen(a: SymMatrix): { values: Float64Array; vectors: Float64Array } {
  const p = a.p;
  const m = Float64Array.from(a.data);
  const v = new Float64Array(p * p);
  for (let i = 0; i < p; i++) v[i * p + i] = 1;
  for (let sweep = 0; sweep < 100; sweep++) {
    let off = 0,
      diag = 0;
    for (let i = 0; i < p; i++) {
      diag += m[i * p + i] * m[i * p + i];
      for (let j = i + 1; j < p; j++) off += m[i * p + j] * m[i * p + j];
    }
    if (off <= 1e-30 * diag || off === 0) break;
    for (let i = 0; i < p; i++)
      for (let j = i + 1; j < p; j++) {
        const aij = m[i * p + j];
        if (aij === 0) continue;
        const theta = (m[j * p + j] - m[i * p + i]) / (2 * aij);
        const t = Math.sign(theta || 1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
        const c = 1 / Math.sqrt(t * t + 1),
          s = t * c;
        for (let k = 0; k < p; k++) {
          const mki = m[k * p + i],
            mkj = m[k * p + j];
          m[k * p + i] = c * mki - s * mkj;
          m[k * p + j] = s * mki + c * mkj;
        }
        for (let k = 0; k < p; k++) {
          const mik = m[i * p + k],
            mjk = m[j * p + k];
          m[i * p + k] = c * mik - s * mjk;
          m[j * p + k] = s * mik + c * mjk;
        }
        for (let k = 0; k < p; k++) {
          const vki = v[k * p + i],
            vkj = v[k * p + j];
          v[k * p + i] = c * vki - s * vkj;
          v[k * p + j] = s * vki + c * vkj;
        }
      }
  }
  return { values: Float64Array.from({ length: p }, (_, i) => m[i * p + i]), vectors: v };
}

/** The nearest positive semi-definite matrix in the eigen sense: negative eigenvalues set to 0. */
export function clipNegativeEigenvalues(a: SymMatrix): { matrix: SymMatrix; clipped: number } {
  const { values, vectors } = symmetricEigen(a);
  const p = a.p;
  const out = new Float64Array(p * p);
  let clipped = 0;
  for (let k = 0; k < p; k++) {
    const lambda = values[k];
    if (lambda < 0) {
      clipped++;
      continue;
    }
    for (let i = 0; i < p; i++)
      for (let j = 0; j < p; j++) out[i * p + j] += lambda * vectors[i * p + k] * vectors[j * p + k];
  }
  return { matrix: { p, data: out }, clipped };
}
