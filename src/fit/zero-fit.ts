// Maximum likelihood for the excess-zero families (zero-likelihood.ts): the
// count coefficients β, the zero-part coefficients γ and, for the NB2 forms,
// a = log α, maximised together by BFGS on the analytic score, then polished
// by Newton steps on a difference Hessian (zero-optimize.ts).
// The standard errors come from the inverse of that observed information.
// Both design matrices are centred and scaled (gee-rows.ts) while fitting.
import { clusterIntersection } from "../design/clusters.js";
import type { Design } from "../design/design.js";
import { clipNegativeEigenvalues } from "../math/eigen.js";
import { cholesky, choleskyInverse, congruence, sandwichProduct, type SymMatrix } from "../math/linalg.js";
import { conditionedRows } from "./gee-rows.js";
import { isHurdle, isNegbinForm, type ZeroFamily } from "./zero-likelihood.js";
import {
  bfgs,
  columnsOf,
  countPredictor,
  evaluate,
  hessian,
  polish,
  type Problem,
  scoreMeat,
  zeroPredictor,
} from "./zero-optimize.js";

export interface ZeroFitOptions {
  family: ZeroFamily;
  /** Estimable count columns and start values (original scale) from the plain fit. */
  countColumns: number[];
  countStart: Float64Array;
  /** Estimable zero-part columns. */
  zeroColumns: number[];
  /** Start of log alpha (NB2 forms). */
  logAlphaStart?: number;
  maxIter?: number;
  /**
   * Also a sandwich covariance H⁻¹(Σ_g u_g u_gᵀ)H⁻¹ with the rows' scores summed
   * within clusters (ids; null: every row its own, the HC0 sandwich of
   * White 1982), with the CR1 factor G/(G − 1)·(N − 1)/(N − k) for clusters;
   * two clusterings give the two-way estimator.
   */
  sandwich?: { ids: Int32Array | null; count: number }[];
}

export interface ZeroFit {
  family: ZeroFamily;
  /** Count coefficients over countColumns and zero-part coefficients over zeroColumns (original scale). */
  beta: Float64Array;
  gamma: Float64Array;
  /** NB2 alpha (0 for the Poisson forms). */
  alpha: number;
  logLik: number;
  /**
   * Inverse observed information (central differences of the analytic score)
   * over [β, γ, log α], original scale; the rows of a parameter at its
   * boundary (`boundary`) are 0 and it has no standard error; null when the
   * information is not positive definite.
   */
  covariance: SymMatrix | null;
  boundary: { zeroPart: boolean; alpha: boolean };
  /** With options.sandwich: the robust or cluster-robust covariance, laid out as `covariance`. */
  sandwichCovariance: SymMatrix | null;
  iterations: number;
  converged: boolean;
  /** Per row: the count mean λ and the zero-part probability (π or p). */
  lambda: Float64Array;
  zeroProb: Float64Array;
}

export function fitZeroModel(count: Design, zero: Design, o: ZeroFitOptions): ZeroFit {
  const rows = Int32Array.from({ length: count.n }, (_, i) => i);
  const X = conditionedRows(count, o.countColumns, rows);
  const Z = conditionedRows(zero, o.zeroColumns, rows);
  const nb = isNegbinForm(o.family);
  const P: Problem = { X, Z, y: count.y, off: count.offset, w: count.weights, family: o.family, nb };
  const p = X.q,
    r = Z.q;
  const m = p + r + (nb ? 1 : 0);
  const theta = new Float64Array(m);
  theta.set(X.fromOriginal(o.countStart), 0);
  // The zero part starts from its share: structural zeros (the zeros beyond the plain fit's), or non-zero counts.
  let zeros = 0;
  for (let i = 0; i < count.n; i++) if (count.y[i] === 0) zeros++;
  const share = isHurdle(o.family) ? 1 - zeros / count.n : Math.max(0.02, Math.min(0.9, zeros / count.n / 2));
  const gamma0 = new Float64Array(r);
  const ic = zero.matrix.interceptCol >= 0 ? o.zeroColumns.indexOf(zero.matrix.interceptCol) : -1;
  if (ic >= 0) gamma0[ic] = Math.log(share / (1 - share));
  theta.set(Z.fromOriginal(gamma0), p);
  if (nb) theta[p + r] = o.logAlphaStart ?? Math.log(0.1);
  const run = bfgs(P, theta, o.maxIter ?? 500);
  const polished = polish(P, theta);
  const logLik = -evaluate(P, theta, null);
  // Boundaries: no excess zeros (the zero part's linear predictor runs off to −∞), or alpha → 0.
  const lambda = new Float64Array(count.n),
    zeroProb = new Float64Array(count.n);
  let meanProb = 0;
  for (let i = 0; i < count.n; i++) {
    lambda[i] = Math.exp(countPredictor(P, theta, i));
    zeroProb[i] = 1 / (1 + Math.exp(-zeroPredictor(P, theta, i)));
    meanProb += zeroProb[i] / count.n;
  }
  const boundary = {
    zeroPart: !isHurdle(o.family) && meanProb < 1e-5,
    alpha: nb && theta[p + r] < Math.log(1e-6),
  };
  // Back to the original scale: [β; γ; a] = blockdiag(Tx, Tz, 1)·θ, and the covariance likewise.
  const beta = X.toOriginal(theta.subarray(0, p));
  const gamma = Z.toOriginal(theta.subarray(p, p + r));
  // The observed information over the parameters off their boundary (a zero part with π → 0 for some rows, or
  // alpha → 0, has no finite information): when it is not positive definite with every parameter, the zero
  // part, then alpha, are taken as at their boundary and get no standard error.
  const H = hessian(P, theta);
  const factor = () => {
    const keep = Array.from({ length: m }, (_, k) => k).filter(
      (k) => !(boundary.zeroPart && k >= p && k < p + r) && !(boundary.alpha && k === p + r),
    );
    const sub: SymMatrix = {
      p: keep.length,
      data: Float64Array.from(
        { length: keep.length * keep.length },
        (_, k) => H.data[keep[Math.floor(k / keep.length)] * m + keep[k % keep.length]],
      ),
    };
    return { keep, l: cholesky(sub) };
  };
  let { keep, l } = factor();
  if (!l && !boundary.zeroPart && !isHurdle(o.family)) {
    boundary.zeroPart = true;
    ({ keep, l } = factor());
  }
  if (!l && nb && !boundary.alpha) {
    boundary.alpha = true;
    ({ keep, l } = factor());
  }
  let covariance: SymMatrix | null = null;
  let sandwichCovariance: SymMatrix | null = null;
  if (l) {
    const inv = choleskyInverse(l, keep.length);
    const full = new Float64Array(m * m);
    keep.forEach((a, i) => {
      keep.forEach((b, j) => {
        full[a * m + b] = inv.data[i * keep.length + j];
      });
    });
    // Back to the original scale: T = blockdiag(T_x, T_z, 1), Cov = T·C·Tᵀ.
    const t = new Float64Array(m * m);
    const tx = columnsOf(X, p),
      tz = columnsOf(Z, r);
    for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) t[i * m + j] = tx[i * p + j];
    for (let i = 0; i < r; i++) for (let j = 0; j < r; j++) t[(p + i) * m + p + j] = tz[i * r + j];
    if (nb) t[(p + r) * m + p + r] = 1;
    covariance = congruence(t, { p: m, data: full });
    if (o.sandwich?.length) {
      const q = keep.length;
      // H⁻¹ M H⁻¹ over the kept parameters, with the CR1 factor for clusters (none for HC0).
      const oneWay = (c: { ids: Int32Array | null; count: number }) => {
        const factor = c.ids ? (c.count / (c.count - 1)) * ((count.n - 1) / (count.n - q)) : 1;
        return sandwichProduct(inv, scoreMeat(P, theta, c, keep)).data.map((x) => x * factor);
      };
      let inner: Float64Array;
      if (o.sandwich.length === 1) inner = oneWay(o.sandwich[0]);
      else {
        // Two-way (Cameron, Gelbach and Miller 2011): V_a + V_b − V_ab, negative eigenvalues set to 0.
        const [a, b] = o.sandwich;
        const both = clusterIntersection({ ids: a.ids!, count: a.count }, { ids: b.ids!, count: b.count });
        const va = oneWay(a),
          vb = oneWay(b),
          vab = oneWay(both);
        const sum: SymMatrix = { p: q, data: va.map((x, k2) => x + vb[k2] - vab[k2]) };
        const clipped = clipNegativeEigenvalues(sum);
        inner = clipped.clipped > 0 ? clipped.matrix.data : sum.data;
      }
      const fullS = new Float64Array(m * m);
      keep.forEach((ka, i) => {
        keep.forEach((kb, j) => {
          fullS[ka * m + kb] = inner[i * q + j];
        });
      });
      sandwichCovariance = congruence(t, { p: m, data: fullS });
    }
  }
  return {
    family: o.family,
    beta,
    gamma,
    alpha: nb ? Math.exp(theta[p + r]) : 0,
    logLik,
    covariance,
    boundary,
    sandwichCovariance,
    iterations: run.iterations,
    converged: (run.converged || polished) && polished,
    lambda,
    zeroProb,
  };
}
