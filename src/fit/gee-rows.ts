// Dense rows of the design over its estimated columns, for the estimating
// equations, centred and scaled so that the information they build is well
// conditioned (a year or a date as a covariate beside the intercept), with
// the maps back to the original coefficients and their covariance.
import type { Design } from "../design/design.js";
import { congruence, type SymMatrix } from "../math/linalg.js";

export interface ConditionedRows {
  /** Rows (in the order asked for) × q conditioned columns, row-major. */
  values: Float64Array;
  n: number;
  q: number;
  /** γ (conditioned) from β (original, over the estimated columns). */
  fromOriginal(beta: Float64Array): Float64Array;
  /** β from γ. */
  toOriginal(gamma: Float64Array): Float64Array;
  /** Cov(β) = T Cov(γ) Tᵀ. */
  covarianceToOriginal(v: SymMatrix): SymMatrix;
}

/** The largest n × q the dense rows may take (8 bytes each). */
export const DENSE_ROWS_LIMIT = 50_000_000;

export function conditionedRows(design: Design, estimable: number[], rows: Int32Array): ConditionedRows {
  const q = estimable.length;
  const n = rows.length;
  const pos = new Int32Array(design.matrix.p).fill(-1);
  estimable.forEach((c, k) => {
    pos[c] = k;
  });
  const values = new Float64Array(n * q);
  for (const s of design.matrix.slots)
    rows.forEach((i, j) => {
      const c = s.cols === null ? s.colStart : s.cols[i];
      if (c < 0 || pos[c] < 0) return;
      values[j * q + pos[c]] = s.values === null ? 1 : s.values[i];
    });
  const intercept = design.matrix.interceptCol >= 0 ? pos[design.matrix.interceptCol] : -1;
  const center = new Float64Array(q);
  const scale = new Float64Array(q).fill(1);
  for (let k = 0; k < q; k++) {
    if (k === intercept) continue;
    let sum = 0;
    for (let j = 0; j < n; j++) sum += values[j * q + k];
    const m = intercept >= 0 ? sum / n : 0;
    let ss = 0;
    for (let j = 0; j < n; j++) ss += (values[j * q + k] - m) ** 2;
    const sd = Math.sqrt(ss / n);
    center[k] = m;
    scale[k] = sd > 0 ? sd : 1;
    for (let j = 0; j < n; j++) values[j * q + k] = (values[j * q + k] - m) / scale[k];
  }
  // β = T γ: β_k = γ_k / s_k, and the intercept absorbs the centring: β_0 = γ_0 − Σ_k γ_k m_k / s_k.
  const t = new Float64Array(q * q);
  for (let k = 0; k < q; k++) {
    t[k * q + k] = 1 / scale[k];
    if (intercept >= 0 && k !== intercept) t[intercept * q + k] = -center[k] / scale[k];
  }
  return {
    values,
    n,
    q,
    fromOriginal(beta) {
      const g = Float64Array.from(beta, (b, k) => b * scale[k]);
      if (intercept >= 0) for (let k = 0; k < q; k++) if (k !== intercept) g[intercept] += beta[k] * center[k];
      return g;
    },
    toOriginal(gamma) {
      const b = new Float64Array(q);
      for (let i = 0; i < q; i++) {
        let acc = 0;
        for (let k = 0; k < q; k++) acc += t[i * q + k] * gamma[k];
        b[i] = acc;
      }
      return b;
    },
    covarianceToOriginal: (v) => congruence(t, v),
  };
}
