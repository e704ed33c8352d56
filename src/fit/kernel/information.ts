// The information matrix at the estimate and the fit's internal coordinates
// (numeric columns centred and scaled by the setup), kept here so that no
// inference module sees them.
import type { DesignMatrix } from "../../design/design.js";
import { cholesky, choleskySolve, congruence, type SymMatrix } from "../../math/linalg.js";
import { crossProductsCells, crossProductsCompiled } from "./cross-products.js";
import { cellsOf, compiledOf, slotValuesOf } from "./setup.js";
import type { FitSetup, GlmFit } from "./types.js";

/**
 * What inference asks of a fit's information matrix, on the original scale of
 * the coefficients. The covariance behind it is the inverse expected (Fisher)
 * information (X'WX)⁻¹, W = diag(weight·mu/V(mu)) at the estimate.
 */
export interface InformationView {
  /** x_iᵀ(X'WX)⁻¹x_i for every row (0 for rows out of the fit); row i's leverage is w_i times this. */
  rowQuadraticForms(): Float64Array;
  /**
   * (X'ω)ᵀ(X'ΩX)⁻¹(X'ω) for row weights ω (Ω = diag ω): the part of Σω that the
   * columns account for, as in the adjustment of a score test for estimated
   * coefficients (0 when X'ΩX is singular).
   */
  weightProjection(omega: Float64Array): number;
  /** The sandwich A⁻¹BA⁻¹ with A = X'WX and B = X'ΩX for row weights ω (Huber 1967; White 1980). */
  sandwich(omega: Float64Array): SymMatrix;
  /**
   * The cluster sandwich A⁻¹(Σ_g u_g u_gᵀ)A⁻¹ with u_g = Σ_{i in g} r_i·x_i, the
   * rows' scores summed within cluster g (Liang and Zeger 1986); cluster[i] is
   * row i's cluster (0 … count − 1, −1: left out). No small-sample factor here.
   */
  clusterSandwich(r: Float64Array, cluster: Int32Array, count: number): SymMatrix;
}

/** The information view of a fit over its design matrix. */
export function informationOf(m: DesignMatrix, fit: Pick<GlmFit, "setup" | "covarianceScaled">): InformationView {
  const setup = fit.setup;
  return {
    rowQuadraticForms: () => rowQuadraticForms(m, setup, fit.covarianceScaled),
    weightProjection(omega) {
      const ones = new Float64Array(m.n).fill(1);
      const { a, b } = setupCrossProducts(m, setup, omega, ones);
      const l = cholesky(a);
      let adj = 0;
      if (l) {
        const sol = choleskySolve(l, a.p, b);
        for (let k = 0; k < sol.length; k++) adj += sol[k] * b[k];
      }
      return adj;
    },
    clusterSandwich(r, cluster, count) {
      const q = fit.covarianceScaled.p;
      const u = new Float64Array(count * q);
      forEachRowScaled(m, setup, (i, idx, val, k) => {
        const g = cluster[i];
        if (g < 0 || r[i] === 0) return;
        for (let a = 0; a < k; a++) u[g * q + idx[a]] += r[i] * val[a];
      });
      const meat = new Float64Array(q * q);
      for (let g = 0; g < count; g++)
        for (let a = 0; a < q; a++) {
          const ua = u[g * q + a];
          if (ua === 0) continue;
          for (let b = 0; b < q; b++) meat[a * q + b] += ua * u[g * q + b];
        }
      const scaled = congruence(fit.covarianceScaled.data, { p: q, data: meat });
      return congruence(transformMatrix(m, setup), scaled);
    },
    sandwich(omega) {
      const { a: meat } = setupCrossProducts(m, setup, omega, null);
      const scaled = congruence(fit.covarianceScaled.data, meat); // A⁻¹ B A⁻¹ (A⁻¹ is symmetric)
      return congruence(transformMatrix(m, setup), scaled);
    },
  };
}

/**
 * X'WX and X'Wz over the estimated columns of a fit's setup, in its scaled
 * coordinates: from the setup's cells when it has them, else row by row.
 */
export function setupCrossProducts(
  m: DesignMatrix,
  setup: FitSetup,
  w: Float64Array,
  z: Float64Array | null,
): { a: SymMatrix; b: Float64Array } {
  const q = setup.order.length;
  const cells = cellsOf(m, setup);
  return cells
    ? crossProductsCells(slotValuesOf(m, setup), cells, m.n, q, w, z)
    : crossProductsCompiled(compiledOf(m, setup), m.n, q, w, z);
}

/** Map scaled-coordinate coefficients of the active columns to the original scale (β = T β'). */
export function transformMatrix(m: DesignMatrix, setup: FitSetup): Float64Array {
  const q = setup.order.length;
  const t = new Float64Array(q * q);
  const ic = m.interceptCol >= 0 ? setup.active[m.interceptCol] : -1;
  setup.order.forEach((c, k) => {
    t[k * q + k] = c === m.interceptCol ? 1 : 1 / setup.scale[c];
    if (ic >= 0 && c !== m.interceptCol && setup.center[c] !== 0) t[ic * q + k] = -setup.center[c] / setup.scale[c];
  });
  return t;
}

/** Each row in the fit with its active positions and scaled values (k of them): the row-by-row view of X. */
function forEachRowScaled(
  m: DesignMatrix,
  setup: FitSetup,
  visit: (i: number, idx: Int32Array, val: Float64Array, k: number) => void,
): void {
  const idx = new Int32Array(m.slots.length);
  const val = new Float64Array(m.slots.length);
  for (let i = 0; i < m.n; i++) {
    if (!setup.inFit[i]) continue;
    let k = 0;
    for (const slot of m.slots) {
      const col = slot.cols === null ? slot.colStart : slot.cols[i];
      if (col < 0) continue;
      const pos = setup.active[col];
      if (pos < 0) continue;
      idx[k] = pos;
      val[k] = slot.values === null ? 1 : (slot.values[i] - setup.center[col]) / setup.scale[col];
      k++;
    }
    visit(i, idx, val, k);
  }
}

/** x_iᵀ C x_i for every row, with C over the active columns in the fit's scaled coordinates. */
export function rowQuadraticForms(m: DesignMatrix, setup: FitSetup, c: SymMatrix): Float64Array {
  const out = new Float64Array(m.n);
  const q = c.p;
  forEachRowScaled(m, setup, (i, idx, val, k) => {
    let s = 0;
    for (let u = 0; u < k; u++) for (let v = 0; v < k; v++) s += val[u] * val[v] * c.data[idx[u] * q + idx[v]];
    out[i] = s;
  });
  return out;
}
