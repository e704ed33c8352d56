// Iteratively reweighted least squares for log-link count models (Nelder and
// Wedderburn 1972; McCullagh and Nelder, Generalized Linear Models, 2nd ed.,
// 1989, §2.5), with step-halving when the deviance rises or turns non-finite
// and convergence on the relative change in deviance.
import type { DesignMatrix } from "../../design/design.js";
import { addFixedOffset } from "../../design/matrix-columns.js";
import { FitError } from "../../errors.js";
import { cholesky, choleskyInverse, choleskySolve, congruence, type SymMatrix } from "../../math/linalg.js";
import { transformMatrix } from "./information.js";
import { countIndex, maxCount } from "../count-table.js";
import { IrlsPasses } from "./iteration.js";
import { passRowArray } from "./pass-team.js";
import { prepareFit } from "./setup.js";
import { DEFAULT_CONTROL, type FitData, type FitOptions, type FitSetup, type GlmFit, type Workspace } from "./types.js";

/** Fit a Poisson (alpha = 0) or NB2 model with known alpha by IRLS. */
export function fitGlm(m: DesignMatrix, data: FitData, options: FitOptions = {}): GlmFit {
  const control = { ...DEFAULT_CONTROL, ...options.control };
  const setup = options.setup ?? prepareFit(m, data, options.fixed);
  const { inFit, order } = setup;
  const q = order.length;
  const passes = new IrlsPasses(
    m,
    setup,
    data,
    offsetWithFixed(m, data.offset, options.fixed, options.workspace),
    options.alpha ?? 0,
    !!options.alphaStep,
  );
  const { eta, mu } = workspaceArrays(m.n, options.workspace);

  const betaS = scaledStart(m, setup, options.start);
  let haveBeta = betaS !== null;
  // From a start: eta, mu and the deviance in one pass (split between threads like every other).
  let devOld: number;
  if (betaS !== null) devOld = passes.evaluate(betaS, eta, mu);
  else {
    startFromData(data.y, inFit, eta, mu);
    devOld = passes.deviance(eta, mu);
  }
  if (!Number.isFinite(devOld) && haveBeta) {
    haveBeta = false;
    startFromData(data.y, inFit, eta, mu);
    devOld = passes.deviance(eta, mu);
  }
  let current: Float64Array = betaS ?? new Float64Array(q);
  let converged = false;
  let iter = 0;
  let dev = devOld;

  while (iter < control.maxIter) {
    iter++;
    const { a, b } = passes.crossProducts(eta, mu, true);
    const l = cholesky(a);
    if (l === null)
      throw new FitError(
        `the weighted cross-product matrix is not positive definite at IRLS iteration ${iter}; the model cannot be fitted on these rows.`,
      );
    let cand: Float64Array = choleskySolve(l, q, b);
    if (!cand.every(Number.isFinite)) {
      // A start so far off that the working response overflows: begin again from the data.
      if (options.start && iter <= 2) {
        haveBeta = false;
        startFromData(data.y, inFit, eta, mu);
        devOld = passes.deviance(eta, mu);
        continue;
      }
      throw new FitError(
        `the IRLS step is not finite at iteration ${iter}; the fitted means overflow. Check for extreme exposures or covariate values.`,
      );
    }
    const predicted = options.stopOnPredicted && haveBeta ? newtonDecrement(a, cand, current) : NaN;
    // The new means overwrite the current ones: a halved step is evaluated from the coefficients alone.
    dev = passes.evaluate(cand, eta, mu);
    let halvings = 0;
    while ((!Number.isFinite(dev) || (haveBeta && dev > devOld * (1 + 1e-12) + 1e-12)) && halvings < 40) {
      if (!haveBeta) break;
      halvings++;
      const half = new Float64Array(q);
      for (let k = 0; k < q; k++) half[k] = 0.5 * (cand[k] + current[k]);
      cand = half;
      dev = passes.evaluate(cand, eta, mu);
    }
    if (!Number.isFinite(dev))
      throw new FitError(
        `the deviance is not finite at IRLS iteration ${iter} even after step-halving; the fitted means overflow. Check for extreme exposures or covariate values.`,
      );
    current = cand;
    haveBeta = true;
    const change = Math.abs(dev - devOld) / (Math.abs(dev) + 0.1);
    devOld = dev;
    let alphaSettled = true;
    if (options.alphaStep) {
      // Joint estimation: one step for alpha at the new means, then the deviance at the new alpha.
      const next = options.alphaStep(mu, passes.alpha, passes.alphaDerivatives());
      if (!(next > 0)) break; // alpha reached the boundary: the caller takes over
      // A step below the settling threshold is not taken: alpha is then final, and so are the pass's sums.
      alphaSettled = Math.abs(Math.log(next / passes.alpha)) < 1e-7;
      if (!alphaSettled) {
        passes.setAlpha(next);
        dev = passes.deviance(eta, mu);
        devOld = dev;
      }
    }
    options.onIteration?.(iter, dev);
    if (change < control.tolerance && alphaSettled) {
      converged = true;
      break;
    }
    // The next step would change the deviance by about predicted²: stop when that is below tolerance.
    if (
      alphaSettled &&
      halvings === 0 &&
      predicted >= 0 &&
      (predicted / (Math.abs(dev) + 0.1)) ** 2 < control.tolerance
    ) {
      converged = true;
      break;
    }
  }

  // Inverse expected (Fisher) information X'WX at the estimate, in the scaled coordinates and on the original scale.
  let covS: SymMatrix = { p: q, data: new Float64Array(q * q).fill(NaN) };
  const t = transformMatrix(m, setup);
  let covariance = covS;
  if (!options.skipCovariance) {
    const { a } = passes.crossProducts(eta, mu, false);
    const l = cholesky(a);
    if (l === null)
      throw new FitError(
        "the information matrix at the estimate is singular; the model cannot be fitted on these rows.",
      );
    covS = choleskyInverse(l, q);
    covariance = congruence(t, covS);
  }
  passes.release();
  const derivatives = converged ? passes.alphaDerivatives() : null;
  const logLik = passes.logLikAtAlpha();
  return {
    beta: originalCoefficients(m, setup, t, current, options.fixed),
    status: setup.status,
    estimable: order,
    covariance,
    mu,
    eta,
    deviance: dev,
    iterations: iter,
    converged,
    alpha: passes.alpha,
    rowsAtZero: setup.rowsAtZero,
    warnings: driftWarnings(data.y, mu, inFit),
    setup,
    covarianceScaled: covS,
    ...(derivatives && logLik !== null ? { negbinAtEstimate: { ...derivatives, logLik } } : {}),
  };
}

/**
 * The offset, copied only when fixed coefficients add to it (columns held at
 * 0, as in term tests, do not): into the workspace's array when it has one of
 * the rows' length, so that the many fits of a profile write one array (no
 * fresh memory to touch per fit, and one array in shared memory for the helper).
 */
function offsetWithFixed(
  m: DesignMatrix,
  offset: Float64Array,
  fixed: Map<number, number> | undefined,
  ws: Workspace | undefined,
): Float64Array {
  if (!fixed || ![...fixed.values()].some((v) => v !== 0)) return offset;
  const off = ws?.off?.length === offset.length ? ws.off : passRowArray(offset.length);
  off.set(offset);
  addFixedOffset(m, fixed, off);
  if (ws) ws.off = off;
  return off;
}

/** eta and mu arrays of the rows' length, taken from the workspace when it has them (and left there). */
function workspaceArrays(n: number, ws: Workspace | undefined): { eta: Float64Array; mu: Float64Array } {
  const eta = ws?.eta?.length === n ? ws.eta : passRowArray(n);
  const mu = ws?.mu?.length === n ? ws.mu : passRowArray(n);
  if (ws) {
    ws.eta = eta;
    ws.mu = mu;
  }
  return { eta, mu };
}

/** Starting coefficients in the scaled coordinates, β' = T⁻¹β on the active columns (null: none, or not finite). */
function scaledStart(m: DesignMatrix, setup: FitSetup, start: Float64Array | null | undefined): Float64Array | null {
  if (!start) return null;
  const { order, active } = setup;
  const betaS = new Float64Array(order.length);
  let ok = true;
  order.forEach((c, k) => {
    const v = start[c];
    if (!Number.isFinite(v)) ok = false;
    betaS[k] = c === m.interceptCol ? v : v * setup.scale[c];
  });
  if (!ok) return null;
  if (m.interceptCol >= 0 && active[m.interceptCol] >= 0) {
    const ic = active[m.interceptCol];
    order.forEach((c, k) => {
      if (c !== m.interceptCol) betaS[ic] += setup.center[c] * (betaS[k] / setup.scale[c]);
    });
  }
  return betaS;
}

/**
 * The usual start from the data: mu = y + 0.1, eta = log mu (rows out of the
 * fit: mu = 0, eta = −∞); for whole counts, log(k + 0.1) is taken once per
 * count value (the same numbers as per row).
 */
function startFromData(y: Float64Array, inFit: Uint8Array, eta: Float64Array, mu: Float64Array): void {
  const counts = countIndex(y);
  const top = counts === null ? 0 : maxCount(y);
  const logs =
    counts === null || top > y.length ? null : Float64Array.from({ length: top + 1 }, (_, k) => Math.log(k + 0.1));
  for (let i = 0; i < y.length; i++) {
    if (!inFit[i]) {
      mu[i] = 0;
      eta[i] = -Infinity;
      continue;
    }
    mu[i] = y[i] + 0.1;
    eta[i] = logs === null ? Math.log(mu[i]) : logs[counts![i]];
  }
}

/** Newton decrement: the deviance change a step predicts, Δᵀ(X'WX)Δ with Δ = cand − current. */
function newtonDecrement(a: SymMatrix, cand: Float64Array, current: Float64Array): number {
  const q = a.p,
    ad = a.data;
  let predicted = 0;
  for (let r = 0; r < q; r++) {
    let sr = 0;
    for (let c = 0; c < q; c++) sr += ad[r * q + c] * (cand[c] - current[c]);
    predicted += (cand[r] - current[r]) * sr;
  }
  return predicted;
}

/** Coefficients on the original scale: β = Tβ' on the estimated columns; NaN aliased, −∞ no events, fixed as set. */
function originalCoefficients(
  m: DesignMatrix,
  setup: FitSetup,
  t: Float64Array,
  betaS: Float64Array,
  fixed: Map<number, number> | undefined,
): Float64Array {
  const q = setup.order.length;
  const beta = new Float64Array(m.p);
  for (let c = 0; c < m.p; c++) {
    const st = setup.status[c];
    beta[c] = st === "aliased" ? NaN : st === "no_events" ? -Infinity : st === "fixed" ? fixed!.get(c)! : 0;
  }
  setup.order.forEach((c, k) => {
    let s = 0;
    for (let j = 0; j < q; j++) s += t[k * q + j] * betaS[j];
    beta[c] = s;
  });
  return beta;
}

/** The warning for rows whose fitted mean is numerically 0 although their column was estimated. */
export function driftWarnings(y: Float64Array, mu: Float64Array, inFit: Uint8Array): string[] {
  let tiny = 0;
  for (let i = 0; i < y.length; i++) if (inFit[i] && y[i] === 0 && mu[i] < 1e-10) tiny++;
  return tiny === 0
    ? []
    : [
        `${tiny} row${tiny === 1 ? " has" : "s have"} a fitted mean below 1e-10: some estimates drift toward infinity, because the rows with zero counts can be fitted exactly (a level or cell with no events, or a range of a numeric term where every count is 0: separation). The estimates and Wald intervals of the terms involved are not meaningful; if it is the reference level of a factor, choose another with --ref.`,
      ];
}
