// The optimizer of the excess-zero likelihoods: the negative log-likelihood
// and its analytic score over both parts (zero-likelihood.ts) in centred and
// scaled coordinates; BFGS with a backtracking (Armijo) line search (Nocedal
// and Wright, Numerical Optimization, 2nd ed., 2006, Algorithm 6.1 and §3.1);
// Newton polishing with step-halving on a Hessian from central differences of
// the score; and the clusters' score sums of the sandwich.
import { cholesky, choleskySolve, type SymMatrix } from "../math/linalg.js";
import type { ConditionedRows } from "./gee-rows.js";
import { rowTerms, type ZeroFamily } from "./zero-likelihood.js";

export interface Problem {
  X: ConditionedRows;
  Z: ConditionedRows;
  y: Float64Array;
  off: Float64Array;
  w: Float64Array | null;
  family: ZeroFamily;
  nb: boolean;
  /** A parameter held at its value (profile likelihood): its score is taken as 0. */
  fixed?: number;
}

/** Row i's count-part linear predictor η = offset + xβ at θ. */
export function countPredictor(P: Problem, theta: Float64Array, i: number): number {
  const p = P.X.q;
  let eta = P.off[i];
  for (let k = 0; k < p; k++) eta += P.X.values[i * p + k] * theta[k];
  return eta;
}

/** Row i's zero-part linear predictor u = zγ at θ. */
export function zeroPredictor(P: Problem, theta: Float64Array, i: number): number {
  const p = P.X.q,
    r = P.Z.q;
  let u = 0;
  for (let k = 0; k < r; k++) u += P.Z.values[i * r + k] * theta[p + k];
  return u;
}

/** Negative log-likelihood and its gradient at θ (conditioned coordinates). */
export function evaluate(P: Problem, theta: Float64Array, grad: Float64Array | null): number {
  const { X, Z, y, w, family, nb } = P;
  const p = X.q,
    r = Z.q;
  const a = nb ? theta[p + r] : 0;
  let nll = 0;
  if (grad) grad.fill(0);
  for (let i = 0; i < y.length; i++) {
    const t = rowTerms(family, y[i], countPredictor(P, theta, i), zeroPredictor(P, theta, i), a);
    const wi = w ? w[i] : 1;
    nll -= wi * t.logLik;
    if (!grad) continue;
    for (let k = 0; k < p; k++) grad[k] -= wi * t.dEta * X.values[i * p + k];
    for (let k = 0; k < r; k++) grad[p + k] -= wi * t.dU * Z.values[i * r + k];
    if (nb) grad[p + r] -= wi * t.dA;
  }
  if (grad && P.fixed !== undefined) grad[P.fixed] = 0;
  return nll;
}

/** BFGS on the inverse Hessian approximation H, with an Armijo backtracking line search. */
export function bfgs(P: Problem, theta: Float64Array, maxIter: number): { iterations: number; converged: boolean } {
  const m = theta.length;
  const H = new Float64Array(m * m);
  for (let k = 0; k < m; k++) H[k * m + k] = 1;
  const g = new Float64Array(m);
  let f = evaluate(P, theta, g);
  const gNew = new Float64Array(m);
  for (let it = 1; it <= maxIter; it++) {
    const d = new Float64Array(m);
    for (let i = 0; i < m; i++) for (let j = 0; j < m; j++) d[i] -= H[i * m + j] * g[j];
    let slope = 0;
    for (let i = 0; i < m; i++) slope += g[i] * d[i];
    if (!(slope < 0)) {
      // Not a descent direction: restart from the gradient.
      H.fill(0);
      for (let k = 0; k < m; k++) H[k * m + k] = 1;
      for (let i = 0; i < m; i++) d[i] = -g[i];
      slope = -g.reduce((s, x) => s + x * x, 0);
    }
    let step = 1;
    const trial = new Float64Array(m);
    let fNew = Number.POSITIVE_INFINITY;
    for (let h = 0; h < 60; h++) {
      for (let i = 0; i < m; i++) trial[i] = theta[i] + step * d[i];
      fNew = evaluate(P, trial, gNew);
      if (Number.isFinite(fNew) && fNew <= f + 1e-4 * step * slope) break;
      step /= 2;
    }
    if (!Number.isFinite(fNew) || fNew > f) return { iterations: it, converged: false };
    const s = trial.map((x, i) => x - theta[i]);
    const yv = gNew.map((x, i) => x - g[i]);
    const sy = s.reduce((acc, x, i) => acc + x * yv[i], 0);
    theta.set(trial);
    g.set(gNew);
    const change = f - fNew;
    f = fNew;
    if (Math.max(...g.map(Math.abs)) < 1e-6 || change < 1e-14 * (Math.abs(f) + 1))
      return { iterations: it, converged: true };
    if (sy > 1e-12) {
      // H ← (I − ρsyᵀ)H(I − ρysᵀ) + ρssᵀ.
      const rho = 1 / sy;
      const Hy = new Float64Array(m);
      for (let i = 0; i < m; i++) for (let j = 0; j < m; j++) Hy[i] += H[i * m + j] * yv[j];
      const yHy = yv.reduce((acc, x, i) => acc + x * Hy[i], 0);
      for (let i = 0; i < m; i++)
        for (let j = 0; j < m; j++)
          H[i * m + j] += -rho * (Hy[i] * s[j] + s[i] * Hy[j]) + (rho * rho * yHy + rho) * s[i] * s[j];
    }
  }
  return { iterations: maxIter, converged: false };
}

/** The Hessian of the negative log-likelihood by central differences of the analytic score. */
export function hessian(P: Problem, theta: Float64Array): SymMatrix {
  const m = theta.length;
  const out = new Float64Array(m * m);
  const gp = new Float64Array(m),
    gm = new Float64Array(m);
  for (let k = 0; k < m; k++) {
    const h = 1e-5 * (1 + Math.abs(theta[k]));
    const t = new Float64Array(theta);
    t[k] = theta[k] + h;
    evaluate(P, t, gp);
    t[k] = theta[k] - h;
    evaluate(P, t, gm);
    for (let j = 0; j < m; j++) out[j * m + k] = (gp[j] - gm[j]) / (2 * h);
  }
  for (let i = 0; i < m; i++)
    for (let j = 0; j < i; j++) {
      const v = (out[i * m + j] + out[j * m + i]) / 2;
      out[i * m + j] = v;
      out[j * m + i] = v;
    }
  return { p: m, data: out };
}

/** Newton steps with step-halving on the difference Hessian, until the score is negligible. */
export function polish(P: Problem, theta: Float64Array): boolean {
  const m = theta.length;
  const g = new Float64Array(m);
  let f = evaluate(P, theta, g);
  for (let it = 0; it < 20; it++) {
    if (Math.max(...g.map(Math.abs)) < 1e-9 * Math.max(1, Math.abs(f)) ** 0.5) return true;
    const H = hessian(P, theta);
    if (P.fixed !== undefined)
      for (let k = 0; k < m; k++) {
        H.data[P.fixed * m + k] = k === P.fixed ? 1 : 0;
        H.data[k * m + P.fixed] = k === P.fixed ? 1 : 0;
      }
    const l = cholesky(H);
    if (!l) return false;
    const step = choleskySolve(l, m, g);
    let s = 1;
    let accepted = false;
    for (let h = 0; h < 30; h++) {
      const trial = theta.map((x, i) => x - s * step[i]);
      const gT = new Float64Array(m);
      const fT = evaluate(P, trial, gT);
      if (Number.isFinite(fT) && fT <= f + 1e-12 * Math.abs(f)) {
        theta.set(trial);
        g.set(gT);
        f = fT;
        accepted = true;
        break;
      }
      s /= 2;
    }
    if (!accepted) return Math.max(...g.map(Math.abs)) < 1e-6;
  }
  return Math.max(...g.map(Math.abs)) < 1e-6;
}

/** Σ_g u_g u_gᵀ over the kept parameters, u_g the rows' scores summed within cluster g (each row its own without ids). */
export function scoreMeat(
  P: Problem,
  theta: Float64Array,
  sw: { ids: Int32Array | null; count: number },
  keep: number[],
): Float64Array {
  const { X, Z, y, w, family, nb } = P;
  const p = X.q,
    r = Z.q,
    q = keep.length;
  const groups = sw.ids ? sw.count : y.length;
  const sums = new Float64Array(groups * q);
  const a = nb ? theta[p + r] : 0;
  const score = new Float64Array(p + r + (nb ? 1 : 0));
  for (let i = 0; i < y.length; i++) {
    const t = rowTerms(family, y[i], countPredictor(P, theta, i), zeroPredictor(P, theta, i), a);
    const wi = w ? w[i] : 1;
    for (let k = 0; k < p; k++) score[k] = wi * t.dEta * X.values[i * p + k];
    for (let k = 0; k < r; k++) score[p + k] = wi * t.dU * Z.values[i * r + k];
    if (nb) score[p + r] = wi * t.dA;
    const g = sw.ids ? sw.ids[i] : i;
    if (g < 0) continue;
    keep.forEach((kk, j) => {
      sums[g * q + j] += score[kk];
    });
  }
  const meat = new Float64Array(q * q);
  for (let g = 0; g < groups; g++)
    for (let i = 0; i < q; i++) {
      const si = sums[g * q + i];
      if (si === 0) continue;
      for (let j = 0; j < q; j++) meat[i * q + j] += si * sums[g * q + j];
    }
  return meat;
}

/** The matrix T of a conditioning map (β = Tγ), column by column. */
export function columnsOf(c: ConditionedRows, q: number): Float64Array {
  const t = new Float64Array(q * q);
  const e = new Float64Array(q);
  for (let j = 0; j < q; j++) {
    e.fill(0);
    e[j] = 1;
    const col = c.toOriginal(e);
    for (let i = 0; i < q; i++) t[i * q + j] = col[i];
  }
  return t;
}
