// Small dense symmetric linear algebra on row-major Float64Array matrices.
// Everything numerical that the fitting code needs from linear algebra goes
// through this one module, so a faster kernel can replace it in one place.

/** A p×p symmetric matrix stored row-major. */
export interface SymMatrix {
  p: number;
  data: Float64Array;
}

export function symZeros(p: number): SymMatrix {
  return { p, data: new Float64Array(p * p) };
}

/**
 * Cholesky factorisation A = L Lᵀ (Golub and Van Loan, Matrix Computations,
 * 4th ed., Algorithm 4.2.1). Returns the lower factor, or null when A is not
 * numerically positive definite.
 */
export function cholesky(a: SymMatrix): Float64Array | null {
  const { p, data } = a;
  const l = new Float64Array(p * p);
  for (let j = 0; j < p; j++) {
    let d = data[j * p + j];
    for (let k = 0; k < j; k++) d -= l[j * p + k] * l[j * p + k];
    if (!(d > 0) || !Number.isFinite(d)) return null;
    const ljj = Math.sqrt(d);
    l[j * p + j] = ljj;
    for (let i = j + 1; i < p; i++) {
      let s = data[i * p + j];
      for (let k = 0; k < j; k++) s -= l[i * p + k] * l[j * p + k];
      l[i * p + j] = s / ljj;
    }
  }
  return l;
}

/** Solve L Lᵀ x = b given the lower Cholesky factor. */
export function choleskySolve(l: Float64Array, p: number, b: Float64Array): Float64Array {
  const y = new Float64Array(p);
  for (let i = 0; i < p; i++) {
    let s = b[i];
    for (let k = 0; k < i; k++) s -= l[i * p + k] * y[k];
    y[i] = s / l[i * p + i];
  }
  const x = new Float64Array(p);
  for (let i = p - 1; i >= 0; i--) {
    let s = y[i];
    for (let k = i + 1; k < p; k++) s -= l[k * p + i] * x[k];
    x[i] = s / l[i * p + i];
  }
  return x;
}

/** Inverse of A from its lower Cholesky factor (solves A X = I column by column). */
export function choleskyInverse(l: Float64Array, p: number): SymMatrix {
  const inv = new Float64Array(p * p);
  const e = new Float64Array(p);
  for (let j = 0; j < p; j++) {
    e.fill(0);
    e[j] = 1;
    const col = choleskySolve(l, p, e);
    for (let i = 0; i < p; i++) inv[i * p + j] = col[i];
  }
  // Symmetrise against rounding.
  for (let i = 0; i < p; i++)
    for (let j = i + 1; j < p; j++) {
      const v = 0.5 * (inv[i * p + j] + inv[j * p + i]);
      inv[i * p + j] = v;
      inv[j * p + i] = v;
    }
  return { p, data: inv };
}

/**
 * Rank screening of a Gram matrix in column order: a Cholesky factorisation
 * that sets aside any column whose remaining diagonal (its squared distance
 * from the span of the columns kept before it, relative to its own squared
 * length) falls below `tol`. This is the diagonal-pivoting rule of a
 * rank-revealing Cholesky (Higham, Accuracy and Stability of Numerical
 * Algorithms, 2nd ed., §10.3) restricted to keep the model's column order, so
 * that a later column aliased with earlier ones is the one dropped.
 */
export function screenRank(a: SymMatrix, tol = 1e-9): boolean[] {
  const { p, data } = a;
  const keep: boolean[] = new Array(p).fill(false);
  const l = new Float64Array(p * p);
  for (let j = 0; j < p; j++) {
    const ajj = data[j * p + j];
    if (!(ajj > 0)) continue;
    let d = ajj;
    for (let k = 0; k < j; k++) if (keep[k]) d -= l[j * p + k] * l[j * p + k];
    if (!(d > tol * ajj)) continue;
    keep[j] = true;
    const ljj = Math.sqrt(d);
    l[j * p + j] = ljj;
    for (let i = j + 1; i < p; i++) {
      let s = data[i * p + j];
      for (let k = 0; k < j; k++) if (keep[k]) s -= l[i * p + k] * l[j * p + k];
      l[i * p + j] = s / ljj;
    }
  }
  return keep;
}

/** B = T A Tᵀ for a square T (row-major, p×p). */
export function congruence(t: Float64Array, a: SymMatrix): SymMatrix {
  const p = a.p;
  const tmp = new Float64Array(p * p);
  for (let i = 0; i < p; i++)
    for (let j = 0; j < p; j++) {
      let s = 0;
      for (let k = 0; k < p; k++) s += t[i * p + k] * a.data[k * p + j];
      tmp[i * p + j] = s;
    }
  const out = new Float64Array(p * p);
  for (let i = 0; i < p; i++)
    for (let j = 0; j < p; j++) {
      let s = 0;
      for (let k = 0; k < p; k++) s += tmp[i * p + k] * t[j * p + k];
      out[i * p + j] = s;
    }
  return { p, data: out };
}

/** Sub-matrix of a symmetric matrix on the given indices. */
export function symSubmatrix(a: SymMatrix, idx: number[]): SymMatrix {
  const q = idx.length;
  const out = new Float64Array(q * q);
  for (let i = 0; i < q; i++) for (let j = 0; j < q; j++) out[i * q + j] = a.data[idx[i] * a.p + idx[j]];
  return { p: q, data: out };
}

/** The sandwich A M A for a symmetric "bread" A (an inverse information) and a p×p "meat" M (row-major). */
export function sandwichProduct(bread: SymMatrix, meat: Float64Array): SymMatrix {
  const q = bread.p;
  const t = new Float64Array(q * q);
  for (let i = 0; i < q; i++)
    for (let j = 0; j < q; j++) {
      let acc = 0;
      for (let k = 0; k < q; k++) acc += bread.data[i * q + k] * meat[k * q + j];
      t[i * q + j] = acc;
    }
  const out = new Float64Array(q * q);
  for (let i = 0; i < q; i++)
    for (let j = 0; j < q; j++) {
      let acc = 0;
      for (let k = 0; k < q; k++) acc += t[i * q + k] * bread.data[k * q + j];
      out[i * q + j] = acc;
    }
  return { p: q, data: out };
}
