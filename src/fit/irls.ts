// Iteratively reweighted least squares for log-link count models (Nelder and
// Wedderburn 1972; McCullagh and Nelder, Generalized Linear Models, 2nd ed.,
// 1989, §2.5), with step-halving when the deviance rises or turns non-finite
// and convergence on the relative change in deviance.
import type { ModelMatrix } from "../design/design.js";
import { FitError } from "../errors.js";
import type { SymMatrix } from "../linalg/dense.js";
import { cholesky, choleskyInverse, choleskySolve, congruence, screenRank } from "../linalg/dense.js";
import { unitDeviance } from "./family.js";

export interface FitControl {
  maxIter: number;
  /** Convergence when |D − D_prev| / (|D| + 0.1) < tolerance. */
  tolerance: number;
}

export const DEFAULT_CONTROL: FitControl = { maxIter: 50, tolerance: 1e-10 };

/** The response, offset and weights a fit needs, aligned with the matrix rows. */
export interface FitData {
  y: Float64Array;
  offset: Float64Array;
  weights: Float64Array | null;
}

export type CoefStatus = "estimated" | "aliased" | "no_events" | "fixed";

export interface GlmFit {
  /** Coefficients on the original scale; NaN when aliased, −Infinity for no events, the set value when fixed. */
  beta: Float64Array;
  status: CoefStatus[];
  /** Design columns that were estimated, in order; the covariance is over these. */
  estimable: number[];
  /**
   * Inverse of the expected (Fisher) information X'WX over the estimated
   * columns, W = diag(weight·mu/V(mu)) at the estimate. For the Poisson with
   * its canonical log link this is also the observed information.
   */
  covariance: SymMatrix;
  mu: Float64Array;
  eta: Float64Array;
  deviance: number;
  iterations: number;
  converged: boolean;
  alpha: number;
  /** Rows whose fitted mean is 0 because they belong to a no-events column. */
  rowsAtZero: number;
  warnings: string[];
  /** The screening and conditioning used; covarianceScaled is in its coordinates. */
  setup: FitSetup;
  covarianceScaled: SymMatrix;
}

export interface FitOptions {
  /** NB2 dispersion; 0 (the default) is the Poisson. */
  alpha?: number;
  control?: Partial<FitControl>;
  /** Coefficients held at a value (moved into the offset), by design column. */
  fixed?: Map<number, number>;
  /** Starting coefficients on the original scale (length p; NaN/−Inf entries ignored). */
  start?: Float64Array | null;
  /** A setup from an earlier call with the same fixed columns, to skip the screening. */
  setup?: FitSetup;
}

/** Screening results: which columns are estimated and how columns are conditioned. */
export interface FitSetup {
  status: CoefStatus[];
  inFit: Uint8Array;
  /** Position of each column among the estimated ones, or −1. */
  active: Int32Array;
  order: number[];
  center: Float64Array;
  scale: Float64Array;
  rowsAtZero: number;
}

/** Raw values of design column c in every row (0 where the column is absent). */
export function columnValues(m: ModelMatrix, c: number): Float64Array {
  const out = new Float64Array(m.n);
  for (const s of m.slots) {
    if (c < s.colStart || c >= s.colStart + s.colCount) continue;
    for (let i = 0; i < m.n; i++) {
      const col = s.cols === null ? s.colStart : s.cols[i];
      if (col === c) out[i] = s.values === null ? 1 : s.values[i];
    }
  }
  return out;
}

/**
 * Screen the columns before fitting.
 * 1. An indicator column (a factor level or cell) whose rows all have zero
 *    counts has its maximum-likelihood estimate at −∞: the rows' fitted means
 *    go to 0 whatever the other coefficients are. Such columns are marked
 *    `no_events` and their rows are fitted exactly (mu = 0).
 * 2. Numeric columns are centred (when a free intercept can absorb the shift)
 *    and scaled to unit root-mean-square, an exact reparametrisation undone
 *    on the results; it keeps the cross-products well conditioned.
 * 3. Linearly dependent columns are found by a rank-screening Cholesky of the
 *    weighted cross-product matrix and marked `aliased`.
 */
export function prepareFit(m: ModelMatrix, data: FitData, fixed?: Map<number, number>): FitSetup {
  const { n, p } = m;
  const pw = data.weights;
  const status: CoefStatus[] = new Array(p).fill("estimated");
  if (fixed) for (const c of fixed.keys()) status[c] = "fixed";
  const inFit = new Uint8Array(n).fill(1);
  if (pw) for (let i = 0; i < n; i++) if (!(pw[i] > 0)) inFit[i] = 0;

  // 1. No-events indicator columns.
  const sumY = new Float64Array(p);
  const count = new Float64Array(p);
  for (const s of m.slots) {
    if (s.cols === null || s.values !== null) continue;
    for (let i = 0; i < n; i++) {
      const c = s.cols[i];
      if (c < 0 || !inFit[i]) continue;
      sumY[c] += data.y[i];
      count[c] += 1;
    }
  }
  const dead = new Uint8Array(p);
  for (const s of m.slots) {
    if (s.cols === null || s.values !== null) continue;
    for (let c = s.colStart; c < s.colStart + s.colCount; c++)
      if (count[c] > 0 && sumY[c] === 0 && status[c] === "estimated") { status[c] = "no_events"; dead[c] = 1; }
  }
  let rowsAtZero = 0;
  for (const s of m.slots) {
    if (s.cols === null || s.values !== null) continue;
    for (let i = 0; i < n; i++) {
      const c = s.cols[i];
      if (c >= 0 && dead[c] && inFit[i]) { inFit[i] = 0; rowsAtZero++; }
    }
  }

  // 2. Conditioning.
  const center = new Float64Array(p);
  const scale = new Float64Array(p).fill(1);
  const freeIntercept = m.interceptCol >= 0 && status[m.interceptCol] === "estimated";
  for (const s of m.slots) {
    if (s.values === null) continue;
    const v = s.values;
    let sw = 0, sx = 0;
    for (let i = 0; i < n; i++) if (inFit[i]) { const w = pw ? pw[i] : 1; sw += w; sx += w * v[i]; }
    if (sw === 0) continue;
    if (s.cols === null && freeIntercept) {
      const mean = sx / sw;
      let ss = 0;
      for (let i = 0; i < n; i++) if (inFit[i]) { const d = v[i] - mean; ss += (pw ? pw[i] : 1) * d * d; }
      const sd = Math.sqrt(ss / sw);
      center[s.colStart] = mean;
      scale[s.colStart] = sd > 0 ? sd : 1;
    } else {
      let ss = 0;
      for (let i = 0; i < n; i++) if (inFit[i]) ss += (pw ? pw[i] : 1) * v[i] * v[i];
      const rms = Math.sqrt(ss / sw);
      for (let c = s.colStart; c < s.colStart + s.colCount; c++) scale[c] = rms > 0 ? rms : 1;
    }
  }

  // 3. Aliasing among the columns still to estimate.
  const cand: number[] = [];
  for (let c = 0; c < p; c++) if (status[c] === "estimated") cand.push(c);
  const candPos = new Int32Array(p).fill(-1);
  cand.forEach((c, k) => (candPos[c] = k));
  const ones = new Float64Array(n).fill(1);
  const gram = crossProducts(m, { inFit, active: candPos, q: cand.length, center, scale }, pw ?? ones, null);
  const keep = screenRank(gram.a);
  cand.forEach((c, k) => { if (!keep[k]) status[c] = "aliased"; });

  const active = new Int32Array(p).fill(-1);
  const order: number[] = [];
  for (let c = 0; c < p; c++) if (status[c] === "estimated") { active[c] = order.length; order.push(c); }
  return { status, inFit, active, order, center, scale, rowsAtZero };
}

export interface Layout {
  inFit: Uint8Array;
  active: Int32Array;
  q: number;
  center: Float64Array;
  scale: Float64Array;
}

/**
 * X'WX and X'Wz over the active columns in scaled coordinates, accumulated row
 * by row from the slots, so a row costs the square of its non-zero columns.
 */
export function crossProducts(m: ModelMatrix, lay: Layout, w: Float64Array, z: Float64Array | null): { a: SymMatrix; b: Float64Array } {
  const q = lay.q;
  const a = new Float64Array(q * q);
  const b = new Float64Array(q);
  const ns = m.slots.length;
  const idx = new Int32Array(ns);
  const val = new Float64Array(ns);
  const { center, scale, active, inFit } = lay;
  for (let i = 0; i < m.n; i++) {
    if (!inFit[i]) continue;
    const wi = w[i];
    if (wi === 0) continue;
    let k = 0;
    for (let s = 0; s < ns; s++) {
      const slot = m.slots[s];
      const c = slot.cols === null ? slot.colStart : slot.cols[i];
      if (c < 0) continue;
      const pos = active[c];
      if (pos < 0) continue;
      idx[k] = pos;
      val[k] = slot.values === null ? 1 : (slot.values[i] - center[c]) / scale[c];
      k++;
    }
    const zi = z === null ? 0 : z[i];
    for (let u = 0; u < k; u++) {
      const wu = wi * val[u];
      const iu = idx[u];
      b[iu] += wu * zi;
      for (let v = 0; v <= u; v++) {
        const iv = idx[v];
        if (iu >= iv) a[iu * q + iv] += wu * val[v];
        else a[iv * q + iu] += wu * val[v];
      }
    }
  }
  for (let r = 0; r < q; r++) for (let c = 0; c < r; c++) a[c * q + r] = a[r * q + c];
  return { a: { p: q, data: a }, b };
}

/** eta = offset + X·beta' (scaled coordinates) over the rows in the fit. */
function linearPredictor(m: ModelMatrix, setup: FitSetup, betaS: Float64Array, off: Float64Array, eta: Float64Array): void {
  const { center, scale, active, inFit } = setup;
  for (let i = 0; i < m.n; i++) {
    if (!inFit[i]) { eta[i] = -Infinity; continue; }
    let e = off[i];
    for (const slot of m.slots) {
      const c = slot.cols === null ? slot.colStart : slot.cols[i];
      if (c < 0) continue;
      const pos = active[c];
      if (pos < 0) continue;
      e += betaS[pos] * (slot.values === null ? 1 : (slot.values[i] - center[c]) / scale[c]);
    }
    eta[i] = e;
  }
}

function totalDeviance(y: Float64Array, mu: Float64Array, pw: Float64Array | null, inFit: Uint8Array, alpha: number): number {
  let d = 0;
  for (let i = 0; i < y.length; i++) if (inFit[i]) d += (pw ? pw[i] : 1) * unitDeviance(y[i], mu[i], alpha);
  return d;
}

/** Map scaled-coordinate coefficients of the active columns to the original scale (β = T β'). */
export function transformMatrix(m: ModelMatrix, setup: FitSetup): Float64Array {
  const q = setup.order.length;
  const t = new Float64Array(q * q);
  const ic = m.interceptCol >= 0 ? setup.active[m.interceptCol] : -1;
  setup.order.forEach((c, k) => {
    t[k * q + k] = c === m.interceptCol ? 1 : 1 / setup.scale[c];
    if (ic >= 0 && c !== m.interceptCol && setup.center[c] !== 0) t[ic * q + k] = -setup.center[c] / setup.scale[c];
  });
  return t;
}

/** Fit a Poisson (alpha = 0) or NB2 model with known alpha by IRLS. */
export function fitGlm(m: ModelMatrix, data: FitData, options: FitOptions = {}): GlmFit {
  const alpha = options.alpha ?? 0;
  const control = { ...DEFAULT_CONTROL, ...options.control };
  const setup = options.setup ?? prepareFit(m, data, options.fixed);
  const { inFit, order, active } = setup;
  const q = order.length;
  const { y } = data;
  const pw = data.weights;
  const n = m.n;

  const off = new Float64Array(data.offset);
  if (options.fixed)
    for (const [c, v] of options.fixed) {
      const x = columnValues(m, c);
      for (let i = 0; i < n; i++) off[i] += v * x[i];
    }

  const eta = new Float64Array(n);
  const mu = new Float64Array(n);
  let betaS: Float64Array = new Float64Array(q);
  let haveBeta = false;
  if (options.start) {
    // Starting values: β' = T⁻¹ β on the active columns.
    const s = options.start;
    let ok = true;
    order.forEach((c, k) => {
      const v = s[c];
      if (!Number.isFinite(v)) ok = false;
      betaS[k] = c === m.interceptCol ? v : v * setup.scale[c];
    });
    if (ok && m.interceptCol >= 0 && active[m.interceptCol] >= 0) {
      const ic = active[m.interceptCol];
      order.forEach((c, k) => { if (c !== m.interceptCol) betaS[ic] += setup.center[c] * (betaS[k] / setup.scale[c]); });
    }
    haveBeta = ok;
  }
  if (haveBeta) {
    linearPredictor(m, setup, betaS, off, eta);
    for (let i = 0; i < n; i++) mu[i] = inFit[i] ? Math.exp(eta[i]) : 0;
  } else {
    for (let i = 0; i < n; i++) {
      if (!inFit[i]) { mu[i] = 0; eta[i] = -Infinity; continue; }
      mu[i] = y[i] + 0.1;
      eta[i] = Math.log(mu[i]);
    }
  }
  let devOld = totalDeviance(y, mu, pw, inFit, alpha);
  if (!Number.isFinite(devOld) && haveBeta) {
    haveBeta = false;
    for (let i = 0; i < n; i++) if (inFit[i]) { mu[i] = y[i] + 0.1; eta[i] = Math.log(mu[i]); }
    devOld = totalDeviance(y, mu, pw, inFit, alpha);
  }
  const w = new Float64Array(n);
  const z = new Float64Array(n);
  let converged = false;
  let iter = 0;
  let dev = devOld;
  const lay = { inFit, active, q, center: setup.center, scale: setup.scale };
  const newEta = new Float64Array(n);
  const newMu = new Float64Array(n);

  while (iter < control.maxIter) {
    iter++;
    for (let i = 0; i < n; i++) {
      if (!inFit[i]) { w[i] = 0; continue; }
      const m_ = mu[i];
      // Working weight mu/V(mu) (log link: dmu/deta = mu) and working response.
      w[i] = (pw ? pw[i] : 1) * m_ / (1 + alpha * m_);
      z[i] = eta[i] - off[i] + (y[i] - m_) / m_;
    }
    const { a, b } = crossProducts(m, lay, w, z);
    const l = cholesky(a);
    if (l === null) throw new FitError(`the weighted cross-product matrix is not positive definite at IRLS iteration ${iter}; the model cannot be fitted on these rows.`);
    let cand: Float64Array = choleskySolve(l, q, b);
    linearPredictor(m, setup, cand, off, newEta);
    for (let i = 0; i < n; i++) newMu[i] = inFit[i] ? Math.exp(newEta[i]) : 0;
    dev = totalDeviance(y, newMu, pw, inFit, alpha);
    let halvings = 0;
    while ((!Number.isFinite(dev) || (haveBeta && dev > devOld * (1 + 1e-12) + 1e-12)) && halvings < 40) {
      if (!haveBeta) break;
      halvings++;
      const half = new Float64Array(q);
      for (let k = 0; k < q; k++) half[k] = 0.5 * (cand[k] + betaS[k]);
      cand = half;
      linearPredictor(m, setup, cand, off, newEta);
      for (let i = 0; i < n; i++) newMu[i] = inFit[i] ? Math.exp(newEta[i]) : 0;
      dev = totalDeviance(y, newMu, pw, inFit, alpha);
    }
    if (!Number.isFinite(dev))
      throw new FitError(`the deviance is not finite at IRLS iteration ${iter} even after step-halving; the fitted means overflow. Check for extreme exposures or covariate values.`);
    betaS = cand;
    haveBeta = true;
    eta.set(newEta);
    mu.set(newMu);
    const change = Math.abs(dev - devOld) / (Math.abs(dev) + 0.1);
    devOld = dev;
    if (change < control.tolerance) { converged = true; break; }
  }

  // Information at the estimate.
  for (let i = 0; i < n; i++) w[i] = inFit[i] ? (pw ? pw[i] : 1) * mu[i] / (1 + alpha * mu[i]) : 0;
  const { a } = crossProducts(m, lay, w, null);
  const l = cholesky(a);
  if (l === null) throw new FitError("the information matrix at the estimate is singular; the model cannot be fitted on these rows.");
  const covS = choleskyInverse(l, q);
  const t = transformMatrix(m, setup);
  const covariance = congruence(t, covS);
  const beta = new Float64Array(m.p);
  for (let c = 0; c < m.p; c++) {
    const st = setup.status[c];
    beta[c] = st === "aliased" ? NaN : st === "no_events" ? -Infinity : st === "fixed" ? options.fixed!.get(c)! : 0;
  }
  order.forEach((c, k) => {
    let s = 0;
    for (let j = 0; j < q; j++) s += t[k * q + j] * betaS[j];
    beta[c] = s;
  });

  const warnings: string[] = [];
  let tiny = 0;
  for (let i = 0; i < n; i++) if (inFit[i] && y[i] === 0 && mu[i] < 1e-10) tiny++;
  if (tiny > 0)
    warnings.push(
      `${tiny} row${tiny === 1 ? " has" : "s have"} a fitted mean below 1e-10: some estimates drift toward infinity (a group with no events that the model fits exactly). If it is the reference level of a factor, choose another with --ref.`,
    );
  return {
    beta, status: setup.status, estimable: order, covariance, mu, eta, deviance: dev, iterations: iter, converged, alpha,
    rowsAtZero: setup.rowsAtZero, warnings, setup, covarianceScaled: covS,
  };
}

/** eta = offset + Σ β_c x_c on the original scale (NaN coefficients skipped, −∞ propagates). */
export function linearPredictorFrom(m: ModelMatrix, beta: Float64Array, offset: Float64Array): Float64Array {
  const eta = new Float64Array(offset);
  for (const s of m.slots)
    for (let i = 0; i < m.n; i++) {
      const c = s.cols === null ? s.colStart : s.cols[i];
      if (c < 0) continue;
      const b = beta[c];
      if (Number.isNaN(b)) continue;
      eta[i] += b === -Infinity ? -Infinity : b * (s.values === null ? 1 : s.values[i]);
    }
  return eta;
}

/** x_iᵀ C x_i for every row, with C over the active columns in the fit's scaled coordinates. */
export function rowQuadraticForms(m: ModelMatrix, setup: FitSetup, c: SymMatrix): Float64Array {
  const out = new Float64Array(m.n);
  const ns = m.slots.length;
  const idx = new Int32Array(ns);
  const val = new Float64Array(ns);
  const q = c.p;
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
    let s = 0;
    for (let u = 0; u < k; u++) for (let v = 0; v < k; v++) s += val[u] * val[v] * c.data[idx[u] * q + idx[v]];
    out[i] = s;
  }
  return out;
}
