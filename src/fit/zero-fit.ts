// Maximum likelihood for the excess-zero families (zero-likelihood.ts): the
// count coefficients β, the zero-part coefficients γ and, for the NB2 forms,
// a = log α, maximised together by BFGS with a backtracking (Armijo) line
// search on the analytic score (Nocedal and Wright, Numerical Optimization,
// 2nd ed., 2006, Algorithm 6.1 and §3.1), then polished by Newton steps with
// step-halving on a Hessian from central differences of the analytic score.
// The standard errors come from the inverse of that observed information.
// Both design matrices are centred and scaled (gee-rows.ts) while fitting.
import type { Design } from "../design/design.js";
import { cholesky, choleskyInverse, choleskySolve, congruence, type SymMatrix } from "../math/linalg.js";
import { brentRoot } from "../math/roots.js";
import { conditionedRows, type ConditionedRows } from "./gee-rows.js";
import { isHurdle, isNegbinForm, rowTerms, type ZeroFamily } from "./zero-likelihood.js";

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
   * White 1982), with the CR1 factor G/(G − 1)·(N − 1)/(N − k) for clusters.
   */
  sandwich?: { ids: Int32Array | null; count: number };
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

interface Problem {
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

/** Negative log-likelihood and its gradient at θ (conditioned coordinates). */
function evaluate(P: Problem, theta: Float64Array, grad: Float64Array | null): number {
  const { X, Z, y, off, w, family, nb } = P;
  const p = X.q,
    r = Z.q;
  const a = nb ? theta[p + r] : 0;
  let nll = 0;
  if (grad) grad.fill(0);
  for (let i = 0; i < y.length; i++) {
    let eta = off[i];
    for (let k = 0; k < p; k++) eta += X.values[i * p + k] * theta[k];
    let u = 0;
    for (let k = 0; k < r; k++) u += Z.values[i * r + k] * theta[p + k];
    const t = rowTerms(family, y[i], eta, u, a);
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
function bfgs(P: Problem, theta: Float64Array, maxIter: number): { iterations: number; converged: boolean } {
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
function hessian(P: Problem, theta: Float64Array): SymMatrix {
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
function polish(P: Problem, theta: Float64Array): boolean {
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
    let eta = count.offset[i];
    for (let k = 0; k < p; k++) eta += X.values[i * p + k] * theta[k];
    let u = 0;
    for (let k = 0; k < r; k++) u += Z.values[i * r + k] * theta[p + k];
    lambda[i] = Math.exp(eta);
    zeroProb[i] = 1 / (1 + Math.exp(-u));
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
    if (o.sandwich) {
      const meat = scoreMeat(P, theta, o.sandwich, keep);
      const q = keep.length;
      const inner = new Float64Array(q * q);
      // H⁻¹ M H⁻¹ over the kept parameters.
      const tmp = new Float64Array(q * q);
      for (let i = 0; i < q; i++)
        for (let j = 0; j < q; j++) {
          let acc = 0;
          for (let k2 = 0; k2 < q; k2++) acc += inv.data[i * q + k2] * meat[k2 * q + j];
          tmp[i * q + j] = acc;
        }
      for (let i = 0; i < q; i++)
        for (let j = 0; j < q; j++) {
          let acc = 0;
          for (let k2 = 0; k2 < q; k2++) acc += tmp[i * q + k2] * inv.data[k2 * q + j];
          inner[i * q + j] = acc;
        }
      const G = o.sandwich.ids ? o.sandwich.count : count.n;
      const factor = o.sandwich.ids ? (G / (G - 1)) * ((count.n - 1) / (count.n - q)) : 1;
      const fullS = new Float64Array(m * m);
      keep.forEach((a, i) => {
        keep.forEach((b, j) => {
          fullS[a * m + b] = inner[i * q + j] * factor;
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

/** Σ_g u_g u_gᵀ over the kept parameters, u_g the rows' scores summed within cluster g (each row its own without ids). */
function scoreMeat(
  P: Problem,
  theta: Float64Array,
  sw: { ids: Int32Array | null; count: number },
  keep: number[],
): Float64Array {
  const { X, Z, y, off, w, family, nb } = P;
  const p = X.q,
    r = Z.q,
    q = keep.length;
  const groups = sw.ids ? sw.count : y.length;
  const sums = new Float64Array(groups * q);
  const a = nb ? theta[p + r] : 0;
  const score = new Float64Array(p + r + (nb ? 1 : 0));
  for (let i = 0; i < y.length; i++) {
    let eta = off[i];
    for (let k = 0; k < p; k++) eta += X.values[i * p + k] * theta[k];
    let u = 0;
    for (let k = 0; k < r; k++) u += Z.values[i * r + k] * theta[p + k];
    const t = rowTerms(family, y[i], eta, u, a);
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
function columnsOf(c: ConditionedRows, q: number): Float64Array {
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

export interface ZeroProfile {
  /** Limits on the original log scale (null: not found), and how each side came out. */
  lower: number | null;
  upper: number | null;
  status: { lower: "limit" | "open" | "failed"; upper: "limit" | "open" | "failed" };
}

/**
 * Profile-likelihood limits of the non-intercept coefficients of both parts
 * (the intercepts absorb the centring, so they keep Wald limits): each
 * coefficient is held at a value and the others maximised again (BFGS and
 * Newton from the estimate), and the limits are where 2·(ℓ̂ − ℓ) crosses the
 * chi-square(1) quantile, found by Brent's method after bracketing outward
 * from the estimate.
 */
export function profileZeroModel(
  count: Design,
  zero: Design,
  o: ZeroFitOptions,
  z: ZeroFit,
  crit: number,
): Map<string, ZeroProfile> {
  const rows = Int32Array.from({ length: count.n }, (_, i) => i);
  const X = conditionedRows(count, o.countColumns, rows);
  const Z = conditionedRows(zero, o.zeroColumns, rows);
  const nb = isNegbinForm(o.family);
  const p = X.q,
    r = Z.q;
  const m = p + r + (nb ? 1 : 0);
  const theta0 = new Float64Array(m);
  theta0.set(X.fromOriginal(z.beta), 0);
  theta0.set(Z.fromOriginal(z.gamma), p);
  if (nb) theta0[p + r] = Math.log(z.alpha);
  const base: Problem = { X, Z, y: count.y, off: count.offset, w: count.weights, family: o.family, nb };
  const ll0 = -evaluate(base, theta0, null);
  const tx = columnsOf(X, p),
    tz = columnsOf(Z, r);
  const out = new Map<string, ZeroProfile>();
  const targets: { key: string; index: number; scale: number }[] = [];
  const countIc = count.matrix.interceptCol >= 0 ? o.countColumns.indexOf(count.matrix.interceptCol) : -1;
  const zeroIc = zero.matrix.interceptCol >= 0 ? o.zeroColumns.indexOf(zero.matrix.interceptCol) : -1;
  for (let k = 0; k < p; k++) if (k !== countIc) targets.push({ key: `count:${k}`, index: k, scale: tx[k * p + k] });
  if (!z.boundary.zeroPart)
    for (let k = 0; k < r; k++)
      if (k !== zeroIc) targets.push({ key: `zero:${k}`, index: p + k, scale: tz[k * r + k] });
  for (const t of targets) {
    const P: Problem = { ...base, fixed: t.index };
    const theta = new Float64Array(theta0);
    // 2(ℓ̂ − ℓ(g)) − crit with the other parameters maximised again, started from the last constrained fit.
    // NaN when the constrained maximum is not reached (the side then fails rather than report a false crossing).
    const deficit = (g: number) => {
      theta[t.index] = g;
      bfgs(P, theta, 300);
      if (!polish(P, theta)) return Number.NaN;
      return 2 * (ll0 + evaluate(P, theta, null)) - crit;
    };
    const g0 = theta0[t.index];
    const v = z.covariance ? z.covariance.data[t.index * z.covariance.p + t.index] : Number.NaN;
    const seG = v > 0 ? Math.sqrt(v) / Math.abs(t.scale) : 1;
    const side = (dir: 1 | -1): { value: number | null; status: "limit" | "open" | "failed" } => {
      theta.set(theta0);
      let a = g0,
        fa = -crit;
      // Outward in steps of one Wald half-width, then wider, until the deficit turns positive.
      const step = seG * Math.sqrt(crit);
      let b = g0 + dir * step;
      let fb = deficit(b);
      for (let e = 1; e < 40 && fb < 0; e++) {
        a = b;
        fa = fb;
        b = g0 + dir * step * (e < 10 ? e + 1 : 10 * 1.5 ** (e - 9));
        // Thirty on the log scale (a ratio of about 1e13) is as far as a limit is sought: beyond it the side is open.
        if (Math.abs((b - g0) * t.scale) > 30) return { value: null, status: "open" };
        fb = deficit(b);
      }
      if (!(fb >= 0)) return { value: null, status: "failed" };
      try {
        const g = brentRoot(deficit, a, b, 1e-10 * (1 + Math.abs(g0)), 100, fa, fb);
        return { value: g * t.scale, status: "limit" };
      } catch {
        return { value: null, status: "failed" };
      }
    };
    const lo = side(-1),
      hi = side(1);
    // With a negative scale the sides swap; the scale of a centred column is positive.
    out.set(t.key, { lower: lo.value, upper: hi.value, status: { lower: lo.status, upper: hi.status } });
  }
  return out;
}
