// The records of an IRLS fit: controls, inputs, options, the screening setup and the result.
import type { SymMatrix } from "../../math/linalg.js";
import type { CellLayout, CompiledSlot, ScaledValues } from "./layout.js";

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
  /** Joint NB2 fits: alpha's score g, curvature h and the log-likelihood at the returned estimate, from its last pass. */
  negbinAtEstimate?: { g: number; h: number; logLik: number };
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
  /** Skip the information matrix at the end (profile fits need only the deviance). */
  skipCovariance?: boolean;
  /**
   * Also stop when the Newton decrement of the last step is so small that the
   * next step's change (quadratic convergence: about its square) would fall
   * below the tolerance. Used for the many constrained fits of a profile.
   */
  stopOnPredicted?: boolean;
  /**
   * Estimate the NB2 alpha jointly: after each IRLS step, this returns the next
   * alpha at the new means (0: the boundary, which stops the fit unconverged);
   * it is given alpha's score and curvature there when the pass that computed
   * the means also accumulated them.
   */
  alphaStep?: (mu: Float64Array, alpha: number, derivatives: { g: number; h: number } | null) => number;
  /** Called after each IRLS iteration (progress on a terminal). */
  onIteration?: (iteration: number, deviance: number) => void;
  /**
   * Arrays to write eta and mu into, reused from one fit to the next (the
   * constrained fits of term tests and profiles, which keep only numbers from
   * each fit): the returned fit's eta and mu are these arrays.
   */
  workspace?: Workspace;
}

/** eta and mu arrays of the rows' length, kept between fits (see FitOptions.workspace). */
export interface Workspace {
  eta?: Float64Array;
  mu?: Float64Array;
  /** The offset plus fixed coefficients' terms, rewritten by each fit that has some. */
  off?: Float64Array;
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
  /** Slots resolved against this setup, built on first use. */
  compiled?: CompiledSlot[];
  /** Rows grouped by column pattern (null: too many patterns to help). */
  cells?: CellLayout | null;
  /** The grouping of a setup this one was derived from: still valid, only positions change. */
  parentCells?: CellLayout | null;
  /** Each slot's values with the centring and scaling to apply (null: an indicator), shared by derived setups. */
  slotValues?: (ScaledValues | null)[];
}
