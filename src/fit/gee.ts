// Generalized estimating equations for counts with a log link (Liang and
// Zeger 1986): Σ_i D_iᵀ V_i⁻¹ (y_i − μ_i) = 0 over clusters i, with
// D_i = diag(μ_i) X_i, V_i = φ A_i^½ R(ρ) A_i^½ and A_i = diag(v(μ)), where
// v(μ) = μ (Poisson, quasi-Poisson) or μ + αμ² (NB2, α held at its
// independence maximum-likelihood value). Solved by Fisher scoring, with ρ
// and φ re-estimated by moments at each step, starting from the
// independence fit. The robust covariance is the sandwich
// B⁻¹ (Σ_i u_i u_iᵀ) B⁻¹ with B = Σ D_iᵀV_i⁻¹D_i and u_i the clusters' scores
// (Liang and Zeger 1986, eq. 8), with the CR1 factor G/(G − 1)·(N − 1)/(N − p)
// as for --cluster, so that the independence structure gives exactly the
// one-way cluster-robust covariance; the model-based covariance is φ·B⁻¹.
import type { Design } from "../design/design.js";
import { cholesky, choleskyInverse, choleskySolve, sandwichProduct, type SymMatrix } from "../math/linalg.js";
import type { GlmFit } from "./kernel/types.js";
import { admissibleRange, applyInverse, momentCorrelation, type WorkingCorrelation } from "./working-correlation.js";
import { conditionedRows, type ConditionedRows } from "./gee-rows.js";

export interface GeeOptions {
  structure: WorkingCorrelation;
  /** Cluster of each design row, 0 … count − 1. */
  clusters: { ids: Int32Array; count: number };
  /** Order of the rows within a cluster (AR(1)); null: the file's order. */
  order?: Float64Array | null;
  /** Estimate φ by Pearson's moment (quasi-Poisson); otherwise φ = 1 for the model-based covariance. */
  estimateScale: boolean;
  maxIter?: number;
  tolerance?: number;
}

export interface GeeFit {
  structure: WorkingCorrelation;
  /** Coefficients by design column; the start fit's NaN (aliased) and −∞ (no events) entries kept. */
  beta: Float64Array;
  eta: Float64Array;
  mu: Float64Array;
  /** The working-correlation parameter ρ (0 for independence). */
  correlation: number;
  /** ρ as estimated, before it was held inside the range where R(ρ) is positive definite. */
  correlationRaw: number;
  /** Pearson moment estimate Σe²/(N − p) (the divisor of ρ's estimate). */
  pearsonScale: number;
  /** φ of the model-based covariance: pearsonScale for the quasi-Poisson, else 1. */
  scale: number;
  /** Robust (sandwich) covariance with the CR1 factor, over the fit's estimable columns. */
  robustCovariance: SymMatrix;
  /** Model-based covariance φ·B⁻¹ over the estimable columns. */
  modelCovariance: SymMatrix;
  iterations: number;
  converged: boolean;
  clusters: number;
  clusterSizes: { min: number; max: number; mean: number };
  /** Rows the equations used (rows at a zero mean from a no-events level left out). */
  n: number;
}

/** The rows of each cluster, in order: rows[starts[g] … starts[g+1] − 1]. */
function clusterOrder(
  design: Design,
  start: GlmFit,
  o: GeeOptions,
): { rows: Int32Array; starts: Int32Array; sizes: number[] } {
  const byCluster: number[][] = Array.from({ length: o.clusters.count }, () => []);
  for (let i = 0; i < design.n; i++)
    if (start.mu[i] > 0 && o.clusters.ids[i] >= 0) byCluster[o.clusters.ids[i]].push(i);
  const key = o.order;
  const rows: number[] = [];
  const starts: number[] = [];
  const sizes: number[] = [];
  for (const members of byCluster) {
    if (members.length === 0) continue;
    if (key) members.sort((a, b) => key[a] - key[b] || a - b);
    starts.push(rows.length);
    sizes.push(members.length);
    rows.push(...members);
  }
  starts.push(rows.length);
  return { rows: Int32Array.from(rows), starts: Int32Array.from(starts), sizes };
}

interface Pass {
  b: SymMatrix;
  u: Float64Array;
  meat: Float64Array;
  rho: number;
  rhoRaw: number;
  pearsonScale: number;
}

/** One evaluation of the estimating equations at γ (conditioned coordinates). */
function evaluate(
  z: ConditionedRows,
  y: Float64Array,
  offset: Float64Array,
  alpha: number,
  gamma: Float64Array,
  starts: Int32Array,
  structure: WorkingCorrelation,
  range: [number, number],
  mu: Float64Array,
): Pass | null {
  const q = z.q;
  const n = z.n;
  const e = new Float64Array(n);
  const s = new Float64Array(n);
  let sumE2 = 0;
  for (let j = 0; j < n; j++) {
    let eta = offset[j];
    for (let k = 0; k < q; k++) eta += z.values[j * q + k] * gamma[k];
    const m = Math.exp(eta);
    if (!Number.isFinite(m) || !(m > 0)) return null;
    mu[j] = m;
    const sd = Math.sqrt(m + alpha * m * m);
    e[j] = (y[j] - m) / sd;
    s[j] = m / sd;
    sumE2 += e[j] * e[j];
  }
  const pearsonScale = sumE2 / Math.max(n - q, 1);
  const rhoRaw = momentCorrelation(structure, e, starts, pearsonScale) ?? 0;
  const rho = Math.min(range[1], Math.max(range[0], rhoRaw));
  const b = new Float64Array(q * q);
  const u = new Float64Array(q);
  const meat = new Float64Array(q * q);
  const width = q + 1;
  let block = new Float64Array(0);
  let solved = new Float64Array(0);
  for (let g = 0; g + 1 < starts.length; g++) {
    const a = starts[g];
    const len = starts[g + 1] - a;
    if (block.length < len * width) {
      block = new Float64Array(len * width * 2);
      solved = new Float64Array(len * width * 2);
    }
    // Columns 0 … q − 1: the rows of A^-½ D = s·x; column q: the Pearson residuals A^-½ (y − μ).
    for (let j = 0; j < len; j++) {
      const r = a + j;
      for (let k = 0; k < q; k++) block[j * width + k] = s[r] * z.values[r * q + k];
      block[j * width + q] = e[r];
    }
    applyInverse(structure, rho, len, width, block, solved);
    const ug = new Float64Array(q);
    for (let j = 0; j < len; j++)
      for (let k = 0; k < q; k++) {
        const x = block[j * width + k];
        ug[k] += x * solved[j * width + q];
        for (let l = 0; l <= k; l++) b[k * q + l] += x * solved[j * width + l];
      }
    for (let k = 0; k < q; k++) {
      u[k] += ug[k];
      for (let l = 0; l <= k; l++) meat[k * q + l] += ug[k] * ug[l];
    }
  }
  for (let k = 0; k < q; k++)
    for (let l = 0; l < k; l++) {
      b[l * q + k] = b[k * q + l];
      meat[l * q + k] = meat[k * q + l];
    }
  return { b: { p: q, data: b }, u, meat, rho, rhoRaw, pearsonScale };
}

/**
 * Solve the estimating equations from an independence fit `start` (its
 * estimable columns and, for the NB2, its alpha). Returns null when the
 * equations have no solution the scoring can reach (a singular B or means
 * that overflow); the caller says so.
 */
export function fitGee(design: Design, start: GlmFit, o: GeeOptions): GeeFit | null {
  const { rows, starts, sizes } = clusterOrder(design, start, o);
  const z = conditionedRows(design, start.estimable, rows);
  const q = z.q;
  const n = rows.length;
  const y = Float64Array.from(rows, (i) => design.y[i]);
  const offset = Float64Array.from(rows, (i) => design.offset[i]);
  const nMax = sizes.reduce((a, b) => Math.max(a, b), 0);
  const range = admissibleRange(o.structure, nMax);
  const gamma = z.fromOriginal(Float64Array.from(start.estimable, (c) => start.beta[c]));
  const maxIter = o.maxIter ?? 100;
  const tol = o.tolerance ?? 1e-10;
  const mu = new Float64Array(n);
  let pass = evaluate(z, y, offset, start.alpha, gamma, starts, o.structure, range, mu);
  let iterations = 0;
  let converged = false;
  while (pass && iterations < maxIter) {
    const l = cholesky(pass.b);
    if (!l) return null;
    const step = choleskySolve(l, q, pass.u);
    let next: Pass | null = null;
    // Halve the step while the means overflow.
    for (let h = 0; h < 30 && !next; h++) {
      const scale = 0.5 ** h;
      const trial = gamma.map((g, k) => g + scale * step[k]);
      next = evaluate(z, y, offset, start.alpha, trial, starts, o.structure, range, mu);
      if (next) gamma.set(trial);
    }
    iterations++;
    if (!next) return null;
    pass = next;
    if (step.every((d, k) => Math.abs(d) <= tol * (1 + Math.abs(gamma[k])))) {
      converged = true;
      break;
    }
  }
  if (!pass) return null;
  const l = cholesky(pass.b);
  if (!l) return null;
  const bInv = choleskyInverse(l, q);
  const G = sizes.length;
  const cr1 = (G / (G - 1)) * ((n - 1) / (n - q));
  const robust = sandwichProduct(bInv, pass.meat);
  const scale = o.estimateScale ? pass.pearsonScale : 1;
  const beta = new Float64Array(start.beta);
  const betaEst = z.toOriginal(gamma);
  start.estimable.forEach((c, k) => {
    beta[c] = betaEst[k];
  });
  const eta = new Float64Array(design.n);
  const muAll = new Float64Array(design.n);
  for (let i = 0; i < design.n; i++) {
    eta[i] = start.eta[i];
    muAll[i] = start.mu[i];
  }
  rows.forEach((i, j) => {
    muAll[i] = mu[j];
    eta[i] = Math.log(mu[j]);
  });
  return {
    structure: o.structure,
    beta,
    eta,
    mu: muAll,
    correlation: pass.rho,
    correlationRaw: pass.rhoRaw,
    pearsonScale: pass.pearsonScale,
    scale,
    robustCovariance: z.covarianceToOriginal({ p: q, data: robust.data.map((v) => v * cr1) }),
    modelCovariance: z.covarianceToOriginal({ p: q, data: bInv.data.map((v) => v * scale) }),
    iterations,
    converged,
    clusters: G,
    clusterSizes: { min: sizes.reduce((a, b) => Math.min(a, b), n), max: nMax, mean: n / G },
    n,
  };
}
