// Per-count terms of the Poisson and NB2 likelihoods, tabulated once per
// response (and alpha) so that a pass over the rows looks them up instead of
// calling a logarithm or log-gamma per row: every deviance, log-likelihood and
// alpha derivative over whole counts reads them from one CountTable.
import { rowArray } from "../math/shared-arrays.js";
import { harmonicTables, negbinCountTerms } from "./family.js";

const maxCounts = new WeakMap<Float64Array, number>();
const countCodes = new WeakMap<Float64Array, Int32Array | null>();
const ylogyTables = new WeakMap<Float64Array, Float64Array>();

/** Counts up to this size are tabulated: per-count terms are looked up, not recomputed per row. */
export const TABLE_LIMIT = 1 << 20;

/**
 * The largest count, remembered per array (the response does not change
 * between fits); Infinity when some count is not a whole number (the summed
 * counts of merged patterns under fractional weights), which turns off the
 * tables indexed by count.
 */
export function maxCount(y: Float64Array): number {
  let t = maxCounts.get(y);
  if (t === undefined) {
    t = 0;
    for (let i = 0; i < y.length; i++) {
      const v = y[i];
      if (v > t) t = v;
      if (v !== Math.floor(v)) {
        t = Infinity;
        break;
      }
    }
    maxCounts.set(y, t);
  }
  return t;
}

/** The counts as 32-bit integers, row-length (shared memory for many rows: see rowArray). */
function countsOf(y: Float64Array): Int32Array {
  const c = rowArray(Int32Array, y.length);
  for (let i = 0; i < y.length; i++) c[i] = y[i];
  return c;
}

/** The counts as 32-bit integers for table lookups, remembered per array (null: not tabulable, see maxCount). */
export function countIndex(y: Float64Array): Int32Array | null {
  let c = countCodes.get(y);
  if (c === undefined) {
    c = maxCount(y) <= TABLE_LIMIT ? countsOf(y) : null;
    countCodes.set(y, c);
  }
  return c;
}

/**
 * The tables of one response at one alpha (0: the Poisson), each built on first
 * use: k·log k (shared by every alpha of the same response), the NB2
 * deviance's (k + r)·log(1 + alpha·k), the NB2 log-likelihood's
 * log Γ(k + r) − log Γ(r) − log k!, and the harmonic sums of alpha's score and
 * curvature (r = 1/alpha, k = 0 … the largest count).
 */
export class CountTable {
  #negbinDeviance: Float64Array | null = null;
  #logLikTerms: Float64Array | null = null;
  #harmonic: { d: Float64Array; e: Float64Array } | null = null;

  private constructor(
    private readonly y: Float64Array,
    /** The counts as integers, one per row. */
    readonly counts: Int32Array,
    /** The largest count. */
    readonly top: number,
    readonly alpha: number,
  ) {}

  /** The table of y at alpha, or null when some count is not whole or too large to tabulate. */
  static of(y: Float64Array, alpha: number): CountTable | null {
    const counts = countIndex(y);
    return counts === null ? null : new CountTable(y, counts, maxCount(y), alpha);
  }

  /** k·log k (0 at k = 0). */
  get ylogy(): Float64Array {
    let t = ylogyTables.get(this.y);
    if (t === undefined) {
      t = new Float64Array(this.top + 1);
      for (let k = 1; k <= this.top; k++) t[k] = k * Math.log(k);
      ylogyTables.set(this.y, t);
    }
    return t;
  }

  /** (k + r)·log(1 + alpha·k), the count-only part of the NB2 unit deviance (alpha > 0). */
  get negbinDeviance(): Float64Array {
    if (this.#negbinDeviance === null) {
      const alpha = this.alpha,
        r = 1 / alpha;
      const t = new Float64Array(this.top + 1);
      for (let k = 0; k <= this.top; k++) t[k] = (k + r) * Math.log1p(alpha * k);
      this.#negbinDeviance = t;
    }
    return this.#negbinDeviance;
  }

  /** log Γ(k + r) − log Γ(r) − log k!, the count-only terms of the NB2 log-likelihood (alpha > 0). */
  get logLikTerms(): Float64Array {
    if (this.#logLikTerms === null) this.#logLikTerms = negbinCountTerms(this.top, 1 / this.alpha);
    return this.#logLikTerms;
  }

  /** Σ_{j<k} 1/(r+j) and Σ_{j<k} 1/(r+j)², for alpha's score and curvature (alpha > 0). */
  get harmonic(): { d: Float64Array; e: Float64Array } {
    if (this.#harmonic === null) this.#harmonic = harmonicTables(this.top, 1 / this.alpha);
    return this.#harmonic;
  }
}
