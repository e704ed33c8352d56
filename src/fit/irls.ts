// Iteratively reweighted least squares for log-link count models (Nelder and
// Wedderburn 1972; McCullagh and Nelder, Generalized Linear Models, 2nd ed.,
// 1989, §2.5), with step-halving when the deviance rises or turns non-finite
// and convergence on the relative change in deviance.
import type { DesignMatrix } from "../design/design.js";
import { FitError } from "../errors.js";
import type { SymMatrix } from "../math/linalg.js";
import { cholesky, choleskyInverse, choleskySolve, congruence, screenRank } from "../math/linalg.js";
import {
  alphaDerivativesFromSums,
  countIndex,
  harmonicTables,
  maxCount,
  negbinCountTerms,
  unitDeviance,
} from "./family.js";

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

function compiledOf(m: DesignMatrix, setup: FitSetup): CompiledSlot[] {
  if (!setup.compiled)
    setup.compiled = compileSlots(m, {
      inFit: setup.inFit,
      active: setup.active,
      q: setup.order.length,
      center: setup.center,
      scale: setup.scale,
    });
  return setup.compiled;
}

/** off += Σ_c value_c · x_c over the fixed columns, one pass per slot that holds any of them. */
export function addFixedOffset(m: DesignMatrix, fixed: Map<number, number>, off: Float64Array): void {
  for (const s of m.slots) {
    let any = false;
    for (const c of fixed.keys()) if (c >= s.colStart && c < s.colStart + s.colCount) any = true;
    if (!any) continue;
    const vals = new Float64Array(s.colCount);
    for (let j = 0; j < s.colCount; j++) vals[j] = fixed.get(s.colStart + j) ?? 0;
    for (let i = 0; i < m.n; i++) {
      const c = s.cols === null ? s.colStart : s.cols[i];
      if (c < 0) continue;
      const v = vals[c - s.colStart];
      if (v !== 0) off[i] += v * (s.values === null ? 1 : s.values[i]);
    }
  }
}

/** Column sums Σ_i x_ic of the given columns, one pass per slot. */
export function columnSums(m: DesignMatrix, cols: number[]): Map<number, number> {
  const want = new Set(cols);
  const out = new Map<number, number>(cols.map((c) => [c, 0]));
  for (const s of m.slots) {
    if (![...want].some((c) => c >= s.colStart && c < s.colStart + s.colCount)) continue;
    const acc = new Float64Array(s.colCount);
    for (let i = 0; i < m.n; i++) {
      const c = s.cols === null ? s.colStart : s.cols[i];
      if (c >= 0) acc[c - s.colStart] += s.values === null ? 1 : s.values[i];
    }
    for (let j = 0; j < s.colCount; j++) if (want.has(s.colStart + j)) out.set(s.colStart + j, acc[j]);
  }
  return out;
}

/** Raw values of design column c in every row (0 where the column is absent). */
export function columnValues(m: DesignMatrix, c: number): Float64Array {
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
export function prepareFit(m: DesignMatrix, data: FitData, fixed?: Map<number, number>): FitSetup {
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
      if (count[c] > 0 && sumY[c] === 0 && status[c] === "estimated") {
        status[c] = "no_events";
        dead[c] = 1;
      }
  }
  let rowsAtZero = 0;
  for (const s of m.slots) {
    if (s.cols === null || s.values !== null) continue;
    for (let i = 0; i < n; i++) {
      const c = s.cols[i];
      if (c >= 0 && dead[c] && inFit[i]) {
        inFit[i] = 0;
        rowsAtZero++;
      }
    }
  }

  // 2. Conditioning.
  const center = new Float64Array(p);
  const scale = new Float64Array(p).fill(1);
  const freeIntercept = m.interceptCol >= 0 && status[m.interceptCol] === "estimated";
  for (const s of m.slots) {
    if (s.values === null) continue;
    const v = s.values;
    let sw = 0,
      sx = 0;
    for (let i = 0; i < n; i++)
      if (inFit[i]) {
        const w = pw ? pw[i] : 1;
        sw += w;
        sx += w * v[i];
      }
    if (sw === 0) continue;
    if (s.cols === null && freeIntercept) {
      const mean = sx / sw;
      let ss = 0;
      for (let i = 0; i < n; i++)
        if (inFit[i]) {
          const d = v[i] - mean;
          ss += (pw ? pw[i] : 1) * d * d;
        }
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
  const cellsCand = buildCells(m, inFit, candPos, maxCellsFor(n));
  const slotValues = scaledValues(m, center, scale);
  const gram = cellsCand
    ? crossProductsCells(slotValues, cellsCand, n, cand.length, pw, null)
    : crossProductsCompiled(
        compileSlots(m, { inFit, active: candPos, q: cand.length, center, scale }),
        n,
        cand.length,
        pw ?? new Float64Array(n).fill(1),
        null,
      );
  const keep = screenRank(gram.a);
  cand.forEach((c, k) => {
    if (!keep[k]) status[c] = "aliased";
  });

  const active = new Int32Array(p).fill(-1);
  const order: number[] = [];
  for (let c = 0; c < p; c++)
    if (status[c] === "estimated") {
      active[c] = order.length;
      order.push(c);
    }
  return { status, inFit, active, order, center, scale, rowsAtZero, parentCells: cellsCand, slotValues };
}

/**
 * The setup of the same model with more columns held fixed: removing columns
 * cannot create new aliasing or no-events columns, so only the positions change.
 */
export function deriveSetup(setup: FitSetup, fixedCols: number[]): FitSetup {
  const status = [...setup.status];
  for (const c of fixedCols) status[c] = "fixed";
  const active = new Int32Array(status.length).fill(-1);
  const order: number[] = [];
  status.forEach((st, c) => {
    if (st === "estimated") {
      active[c] = order.length;
      order.push(c);
    }
  });
  return {
    status,
    inFit: setup.inFit,
    active,
    order,
    center: setup.center,
    scale: setup.scale,
    rowsAtZero: setup.rowsAtZero,
    parentCells: setup.cells ?? setup.parentCells ?? null,
    slotValues: setup.slotValues,
  };
}

export interface Layout {
  inFit: Uint8Array;
  active: Int32Array;
  q: number;
  center: Float64Array;
  scale: Float64Array;
}

/**
 * A slot resolved against a layout: the active position of its column in
 * each row (−1: none, or the row is out of the fit) and its scaled value
 * (null: 1). Loops over these typed arrays are the hot path of IRLS.
 */
export interface CompiledSlot {
  pos: Int32Array;
  val: Float64Array | null;
}

export function compileSlots(m: DesignMatrix, lay: Layout): CompiledSlot[] {
  const n = m.n;
  return m.slots.map((slot) => {
    const pos = new Int32Array(n);
    const cols = slot.cols;
    const fixed = lay.active[slot.colStart];
    for (let i = 0; i < n; i++) {
      if (!lay.inFit[i]) {
        pos[i] = -1;
        continue;
      }
      if (cols === null) pos[i] = fixed;
      else {
        const c = cols[i];
        pos[i] = c < 0 ? -1 : lay.active[c];
      }
    }
    let val: Float64Array | null = null;
    if (slot.values !== null) {
      // Centre and scale are shared by all columns of a slot.
      const c0 = lay.center[slot.colStart],
        s0 = lay.scale[slot.colStart];
      val = new Float64Array(n);
      const v = slot.values;
      for (let i = 0; i < n; i++) val[i] = (v[i] - c0) / s0;
    }
    return { pos, val };
  });
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

/** The setup's cells, built or derived from its parent's on first use (null: too many to help). */
function cellsOf(m: DesignMatrix, setup: FitSetup): CellLayout | null {
  if (setup.cells === undefined)
    setup.cells = setup.parentCells
      ? recellPositions(m, setup.parentCells, setup.active)
      : setup.parentCells === null
        ? null
        : buildCells(m, setup.inFit, setup.active, maxCellsFor(m.n));
  return setup.cells;
}

function slotValuesOf(m: DesignMatrix, setup: FitSetup): (ScaledValues | null)[] {
  if (!setup.slotValues) setup.slotValues = scaledValues(m, setup.center, setup.scale);
  return setup.slotValues;
}

/**
 * A slot's values as the fit sees them, (raw − center)/scale, computed where
 * they are used instead of stored (a copy per slot would cost as much memory
 * as the column itself).
 */
export interface ScaledValues {
  raw: Float64Array;
  center: number;
  scale: number;
}

function scaledValues(m: DesignMatrix, center: Float64Array, scale: Float64Array): (ScaledValues | null)[] {
  // Centre and scale are shared by all columns of a slot.
  return m.slots.map((s) =>
    s.values === null ? null : { raw: s.values, center: center[s.colStart], scale: scale[s.colStart] },
  );
}

/** More cells than this and the row-by-row path is used instead. */
function maxCellsFor(n: number): number {
  return Math.max(64, Math.floor(n / 8));
}

/**
 * Rows grouped by which columns they touch: within a group ("cell") every row
 * has the same active columns, so X'WX and X'Wz follow from a few weighted sums
 * per cell (Σw, Σw·v, Σw·v·v' over the numeric slots) accumulated in one pass.
 * This is the covariate-pattern idea applied to the column pattern only, so it
 * is exact for any offset and weights.
 */
export interface CellLayout {
  nCells: number;
  cell: Int32Array;
  /** nCells × k: the active position of each slot in the cell (−1: none). */
  cellPos: Int32Array;
  /** Slots that carry values (numeric, slopes), and their order among them. */
  numeric: number[];
  numericIndex: Int32Array;
  /** A row of each cell. */
  reps: Int32Array;
}

export function buildCells(
  m: DesignMatrix,
  inFit: Uint8Array,
  active: Int32Array,
  maxCells: number,
): CellLayout | null {
  const n = m.n,
    k = m.slots.length;
  // The key of a row: the column each factor slot puts it in (0 for none), in mixed radix.
  const varying = m.slots.filter((sl) => sl.cols !== null);
  let radix = 1;
  const mult: number[] = [];
  for (const sl of varying) {
    mult.push(radix);
    radix *= sl.colCount + 1;
    if (radix > 2 ** 52) return null;
  }
  const ids = new Map<number, number>();
  const cell = new Int32Array(n);
  const reps: number[] = [];
  const nv = varying.length;
  const colsOf = varying.map((sl) => sl.cols!),
    startOf = varying.map((sl) => sl.colStart);
  for (let i = 0; i < n; i++) {
    if (!inFit[i]) {
      cell[i] = -1;
      continue;
    }
    let key = 0;
    for (let v = 0; v < nv; v++) {
      const c = colsOf[v][i];
      key += (c < 0 ? 0 : c - startOf[v] + 1) * mult[v];
    }
    let id = ids.get(key);
    if (id === undefined) {
      id = reps.length;
      if (id >= maxCells) return null;
      ids.set(key, id);
      reps.push(i);
    }
    cell[i] = id;
  }
  const numeric = m.slots.map((sl, si) => (sl.values !== null ? si : -1)).filter((si) => si >= 0);
  const numericIndex = new Int32Array(k).fill(-1);
  numeric.forEach((si, j) => (numericIndex[si] = j));
  const layout = {
    nCells: reps.length,
    cell,
    cellPos: new Int32Array(0),
    numeric,
    numericIndex,
    reps: Int32Array.from(reps),
  };
  return recellPositions(m, layout, active);
}

/** A parent's grouping with the positions of a derived setup (same rows per cell). */
function recellPositions(m: DesignMatrix, parent: CellLayout, active: Int32Array): CellLayout {
  const k = m.slots.length;
  const cellPos = new Int32Array(parent.nCells * k);
  for (let c = 0; c < parent.nCells; c++) {
    const i = parent.reps[c];
    m.slots.forEach((slot, s) => {
      const col = slot.cols === null ? slot.colStart : slot.cols[i];
      cellPos[c * k + s] = col < 0 ? -1 : active[col];
    });
  }
  return { ...parent, cellPos };
}

/** The per-cell constants of eta = offset + X·beta' (see CellLayout): the indicator part and each numeric slot's coefficient. */
function cellCoefficients(L: CellLayout, slotVals: (ScaledValues | null)[], betaS: Float64Array) {
  const k = slotVals.length,
    C = L.nCells,
    M = L.numeric.length;
  const cst = new Float64Array(C),
    coef = new Float64Array(C * M);
  for (let c = 0; c < C; c++)
    for (let s = 0; s < k; s++) {
      const p = L.cellPos[c * k + s];
      if (p < 0) continue;
      // A numeric slot's coefficient is divided by its scale here, so the row pass needs no division: β'(x − c)/s = (β'/s)(x − c).
      const sv = slotVals[s];
      if (sv === null) cst[c] += betaS[p];
      else coef[c * M + L.numericIndex[s]] = betaS[p] / sv.scale;
    }
  const vals = L.numeric.map((s) => slotVals[s]!);
  return { M, cst, coef, raws: vals.map((v) => v.raw), cens: Float64Array.from(vals, (v) => v.center) };
}

/** eta = offset + X·beta' from the cells: a constant per cell plus the numeric slots (−∞ for rows out of the fit). */
function linearPredictorCells(
  L: CellLayout,
  slotVals: (ScaledValues | null)[],
  betaS: Float64Array,
  off: Float64Array,
  eta: Float64Array,
): void {
  const { M, cst, coef, raws, cens } = cellCoefficients(L, slotVals, betaS);
  const r0 = M > 0 ? raws[0] : off,
    c0 = M > 0 ? cens[0] : 0;
  const r1 = M > 1 ? raws[1] : off,
    c1 = M > 1 ? cens[1] : 0;
  const cell = L.cell,
    n = off.length;
  for (let i = 0; i < n; i++) {
    const c = cell[i];
    if (c < 0) {
      eta[i] = -Infinity;
      continue;
    }
    let e = off[i] + cst[c];
    if (M === 1) e += coef[c] * (r0[i] - c0);
    else if (M === 2) e += coef[2 * c] * (r0[i] - c0) + coef[2 * c + 1] * (r1[i] - c1);
    else for (let m = 0; m < M; m++) e += coef[c * M + m] * (raws[m][i] - cens[m]);
    eta[i] = e;
  }
}

/**
 * eta (see linearPredictorCells), mu = exp(eta) and the Poisson deviance (see
 * totalDeviance): the pass that follows every IRLS step and step-halving.
 * The NB2 twin is predictCellsNegbin.
 */
function predictCellsPoisson(
  L: CellLayout,
  slotVals: (ScaledValues | null)[],
  betaS: Float64Array,
  off: Float64Array,
  eta: Float64Array,
  mu: Float64Array,
  pw: Float64Array | null,
  tab: DevianceTable,
): number {
  linearPredictorCells(L, slotVals, betaS, off, eta);
  const cell = L.cell,
    yl = tab.ylogy,
    cnt = tab.counts;
  let d = 0;
  for (let i = 0; i < eta.length; i++) {
    if (cell[i] < 0) {
      mu[i] = 0;
      continue;
    }
    const e = eta[i],
      mi = Math.exp(e);
    mu[i] = mi;
    const y = cnt[i];
    const u = yl[y] - y * e - (y - mi);
    d += pw === null ? u : pw[i] * u;
  }
  return 2 * d;
}

/** Per-count tables at one alpha, and what the joint pass accumulates: the five alpha sums, then the log-likelihood. */
interface AlphaSums {
  alpha: number;
  want: boolean;
  d: Float64Array;
  e: Float64Array;
  lgammaTerms: Float64Array;
  out: Float64Array;
}

function alphaSumsAt(
  y: Float64Array,
  alpha: number,
  want: boolean,
  out: Float64Array = new Float64Array(6),
): AlphaSums {
  if (!want)
    return { alpha, want, d: new Float64Array(0), e: new Float64Array(0), lgammaTerms: new Float64Array(0), out };
  const top = maxCount(y),
    r = 1 / alpha;
  return { alpha, want, ...harmonicTables(top, r), lgammaTerms: negbinCountTerms(top, r), out };
}

/**
 * The NB2 twin of predictCellsPoisson; when sums.want, it also accumulates
 * the five sums of alphaDerivativesFromSums and the NB2 log-likelihood at this
 * alpha and the new means (the joint alpha step needs them, and the pass
 * computes log(1 + alpha·mu) anyway).
 */
function predictCellsNegbin(
  L: CellLayout,
  slotVals: (ScaledValues | null)[],
  betaS: Float64Array,
  off: Float64Array,
  eta: Float64Array,
  mu: Float64Array,
  pw: Float64Array | null,
  alpha: number,
  tab: DevianceTable,
  sums: AlphaSums,
): number {
  linearPredictorCells(L, slotVals, betaS, off, eta);
  const cell = L.cell,
    yl = tab.ylogy,
    cnt = tab.counts,
    nb = tab.nb!,
    r = 1 / alpha;
  const hd = sums.d,
    he = sums.e,
    lt = sums.lgammaTerms,
    want = sums.want,
    logAlpha = Math.log(alpha);
  let d = 0,
    a1 = 0,
    a2 = 0,
    a3 = 0,
    a4 = 0,
    a5 = 0,
    ll = 0;
  for (let i = 0; i < eta.length; i++) {
    if (cell[i] < 0) {
      mu[i] = 0;
      continue;
    }
    const e = eta[i],
      mi = Math.exp(e);
    mu[i] = mi;
    const y = cnt[i];
    const wi = pw === null ? 1 : pw[i];
    const am = alpha * mi,
      l = Math.log1p(am);
    d += wi * (yl[y] - y * e - nb[y] + (y + r) * l);
    if (want && mi > 0) {
      const iq = 1 / (1 + am),
        res = (y - mi) * iq;
      a1 += wi * (l - hd[y]);
      a2 += wi * res;
      a3 += wi * mi * iq;
      a4 += wi * he[y];
      a5 += wi * res * iq * (1 + 2 * am);
      ll += wi * (lt[y] - r * l + y * (logAlpha + e - l));
    }
  }
  const o = sums.out;
  o[0] = a1;
  o[1] = a2;
  o[2] = a3;
  o[3] = a4;
  o[4] = a5;
  o[5] = ll;
  return 2 * d;
}

/**
 * What the IRLS working weight w = pw·mu/(1 + alpha·mu) and working response
 * z = eta − offset + (y − mu)/mu are made of, so that a pass can compute them
 * row by row instead of reading them from stored arrays.
 */
export interface WorkingInputs {
  mu: Float64Array;
  eta: Float64Array;
  off: Float64Array;
  y: Float64Array;
  pw: Float64Array | null;
  alpha: number;
  /** false: the weights only (the information matrix). */
  withResponse: boolean;
}

/** X'WX and X'Wz from the cell sums (see CellLayout); w and z given as arrays or as their WorkingInputs (w null: every weight 1). */
export function crossProductsCells(
  slotVals: (ScaledValues | null)[],
  L: CellLayout,
  n: number,
  q: number,
  w: Float64Array | WorkingInputs | null,
  z: Float64Array | null,
): { a: SymMatrix; b: Float64Array } {
  const M = L.numeric.length;
  const MM = (M * (M + 1)) / 2;
  const C = L.nCells;
  const s0 = new Float64Array(C),
    s1 = new Float64Array(C * M),
    s2 = new Float64Array(C * MM);
  const z0 = new Float64Array(C),
    z1 = new Float64Array(C * M);
  const raws = L.numeric.map((s) => slotVals[s]!.raw),
    cens = L.numeric.map((s) => slotVals[s]!.center),
    inv = L.numeric.map((s) => 1 / slotVals[s]!.scale);
  const cell = L.cell;
  const vi = new Float64Array(M);
  const work = w instanceof Float64Array || w === null ? null : w;
  const wArr = w instanceof Float64Array ? w : null;
  const alpha = work ? work.alpha : 0,
    pw = work ? work.pw : null;
  for (let i = 0; i < n; i++) {
    const c = cell[i];
    if (c < 0) continue;
    let wi: number, zi: number;
    if (work === null) {
      wi = wArr === null ? 1 : wArr[i];
      zi = z === null ? 0 : z[i];
    } else {
      const m = work.mu[i];
      const base = alpha === 0 ? m : m / (1 + alpha * m);
      wi = pw === null ? base : pw[i] * base;
      zi = work.withResponse ? work.eta[i] - work.off[i] + (work.y[i] - m) / m : 0;
    }
    if (wi === 0) continue;
    s0[c] += wi;
    z0[c] += wi * zi;
    let t = c * MM;
    for (let m = 0; m < M; m++) {
      const v = (raws[m][i] - cens[m]) * inv[m];
      vi[m] = v;
      const wv = wi * v;
      s1[c * M + m] += wv;
      z1[c * M + m] += wv * zi;
      for (let r = 0; r <= m; r++) s2[t++] += wv * vi[r];
    }
  }
  const k = slotVals.length;
  const a = new Float64Array(q * q);
  const b = new Float64Array(q);
  const pos = new Int32Array(k),
    num = new Int32Array(k);
  for (let c = 0; c < C; c++) {
    let na = 0;
    for (let s = 0; s < k; s++) {
      const p = L.cellPos[c * k + s];
      if (p < 0) continue;
      pos[na] = p;
      num[na] = L.numericIndex[s];
      na++;
    }
    for (let u = 0; u < na; u++) {
      const mu_ = num[u];
      b[pos[u]] += mu_ < 0 ? z0[c] : z1[c * M + mu_];
      for (let v = 0; v <= u; v++) {
        const mv = num[v];
        let val: number;
        if (mu_ < 0 && mv < 0) val = s0[c];
        else if (mu_ < 0) val = s1[c * M + mv];
        else if (mv < 0) val = s1[c * M + mu_];
        else {
          const hi = Math.max(mu_, mv),
            lo = Math.min(mu_, mv);
          val = s2[c * MM + (hi * (hi + 1)) / 2 + lo];
        }
        const r = pos[u],
          cc = pos[v];
        if (r >= cc) a[r * q + cc] += val;
        else a[cc * q + r] += val;
      }
    }
  }
  for (let r = 0; r < q; r++) for (let c = 0; c < r; c++) a[c * q + r] = a[r * q + c];
  return { a: { p: q, data: a }, b };
}

let onesCache = new Float64Array(0);
function onesOf(n: number): Float64Array {
  if (onesCache.length !== n) onesCache = new Float64Array(n).fill(1);
  return onesCache;
}

export function crossProductsCompiled(
  cs: CompiledSlot[],
  n: number,
  q: number,
  w: Float64Array,
  z: Float64Array | null,
): { a: SymMatrix; b: Float64Array } {
  const a = new Float64Array(q * q);
  const b = new Float64Array(q);
  const k = cs.length;
  const P = cs.map((c) => c.pos);
  const V = cs.map((c) => c.val ?? onesOf(n));
  const idx = new Int32Array(k);
  const val = new Float64Array(k);
  // Row by row: each array is read once per call, which matters more than
  // anything else once the rows no longer fit in cache.
  for (let i = 0; i < n; i++) {
    const wi = w[i];
    if (wi === 0) continue;
    let m = 0;
    for (let s = 0; s < k; s++) {
      const p = P[s][i];
      if (p < 0) continue;
      idx[m] = p;
      val[m] = V[s][i];
      m++;
    }
    const zi = z === null ? 0 : z[i];
    for (let u = 0; u < m; u++) {
      const iu = idx[u];
      const wu = wi * val[u];
      b[iu] += wu * zi;
      // Slots are in column order, so idx is increasing: (iu, iv) is in the lower triangle.
      const row = iu * q;
      for (let v = 0; v <= u; v++) a[row + idx[v]] += wu * val[v];
    }
  }
  for (let r = 0; r < q; r++) for (let c = 0; c < r; c++) a[c * q + r] = a[r * q + c];
  return { a: { p: q, data: a }, b };
}

/** eta = offset + X·beta' (scaled coordinates) over the rows in the fit. */
function linearPredictor(
  cs: CompiledSlot[],
  inFit: Uint8Array,
  betaS: Float64Array,
  off: Float64Array,
  eta: Float64Array,
): void {
  const n = off.length;
  for (let i = 0; i < n; i++) eta[i] = inFit[i] ? off[i] : -Infinity;
  for (const { pos, val } of cs) {
    if (val === null)
      for (let i = 0; i < n; i++) {
        const p = pos[i];
        if (p >= 0) eta[i] += betaS[p];
      }
    else
      for (let i = 0; i < n; i++) {
        const p = pos[i];
        if (p >= 0) eta[i] += betaS[p] * val[i];
      }
  }
}

function workingValues(
  n: number,
  inFit: Uint8Array,
  mu: Float64Array,
  eta: Float64Array,
  off: Float64Array,
  y: Float64Array,
  pw: Float64Array | null,
  alpha: number,
  w: Float64Array,
  z: Float64Array,
): void {
  for (let i = 0; i < n; i++) {
    if (!inFit[i]) {
      w[i] = 0;
      z[i] = 0;
      continue;
    }
    const m = mu[i];
    const wi = alpha === 0 ? m : m / (1 + alpha * m);
    w[i] = pw === null ? wi : pw[i] * wi;
    z[i] = eta[i] - off[i] + (y[i] - m) / m;
  }
}

function expInto(eta: Float64Array, inFit: Uint8Array, mu: Float64Array): void {
  for (let i = 0; i < eta.length; i++) mu[i] = inFit[i] ? Math.exp(eta[i]) : 0;
}

/** y-only parts of the unit deviance, tabulated by count (null when the counts cannot be tabulated). */
interface DevianceTable {
  ylogy: Float64Array;
  nb: Float64Array | null;
  alpha: number;
  counts: Int32Array;
}

function devianceTable(y: Float64Array, alpha: number): DevianceTable | null {
  const counts = countIndex(y);
  if (counts === null) return null;
  const top = maxCount(y);
  const ylogy = new Float64Array(top + 1);
  for (let k = 1; k <= top; k++) ylogy[k] = k * Math.log(k);
  let nb: Float64Array | null = null;
  if (alpha > 0) {
    const r = 1 / alpha;
    nb = new Float64Array(top + 1);
    for (let k = 0; k <= top; k++) nb[k] = (k + r) * Math.log1p(alpha * k);
  }
  return { ylogy, nb, alpha, counts };
}

/**
 * Total deviance Σ w·d(y, mu), using log mu = eta: Poisson 2[y log y − y·eta − (y − mu)],
 * NB2 2[y log y − y·eta − (y + r){log(1 + alpha·y) − log(1 + alpha·mu)}].
 */
function totalDeviance(
  y: Float64Array,
  mu: Float64Array,
  eta: Float64Array,
  pw: Float64Array | null,
  inFit: Uint8Array,
  alpha: number,
  tab: DevianceTable | null,
): number {
  let d = 0;
  if (tab) {
    const yl = tab.ylogy,
      cnt = tab.counts;
    if (alpha === 0) {
      for (let i = 0; i < cnt.length; i++) {
        if (!inFit[i]) continue;
        const k = cnt[i],
          m = mu[i];
        const u = yl[k] - k * eta[i] - (k - m);
        d += pw === null ? u : pw[i] * u;
      }
    } else {
      const nb = tab.nb!,
        r = 1 / alpha;
      for (let i = 0; i < cnt.length; i++) {
        if (!inFit[i]) continue;
        const k = cnt[i],
          m = mu[i];
        const u = yl[k] - k * eta[i] - nb[k] + (k + r) * Math.log1p(alpha * m);
        d += pw === null ? u : pw[i] * u;
      }
    }
    return 2 * d;
  }
  for (let i = 0; i < y.length; i++) if (inFit[i]) d += (pw ? pw[i] : 1) * unitDeviance(y[i], mu[i], alpha);
  return d;
}

/** Total deviance Σ w·d(y, mu) over the rows in the fit, given log mu = eta (see totalDeviance). */
export function devianceAt(
  y: Float64Array,
  mu: Float64Array,
  eta: Float64Array,
  pw: Float64Array | null,
  inFit: Uint8Array,
  alpha: number,
): number {
  return totalDeviance(y, mu, eta, pw, inFit, alpha, devianceTable(y, alpha));
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

/** Fit a Poisson (alpha = 0) or NB2 model with known alpha by IRLS. */
export function fitGlm(m: DesignMatrix, data: FitData, options: FitOptions = {}): GlmFit {
  let alpha = options.alpha ?? 0;
  const control = { ...DEFAULT_CONTROL, ...options.control };
  const setup = options.setup ?? prepareFit(m, data, options.fixed);
  const { inFit, order, active } = setup;
  const q = order.length;
  const { y } = data;
  const pw = data.weights;
  const n = m.n;

  // The offset is copied only when fixed coefficients add to it (columns held at 0, as in term tests, do not).
  let off = data.offset;
  if (options.fixed && [...options.fixed.values()].some((v) => v !== 0)) {
    off = new Float64Array(data.offset);
    addFixedOffset(m, options.fixed, off);
  }

  const cells = cellsOf(m, setup);
  const vals = slotValuesOf(m, setup);
  const cs = cells ? null : compiledOf(m, setup);
  const linpred = (b_: Float64Array, e_: Float64Array) =>
    cells ? linearPredictorCells(cells, vals, b_, off, e_) : linearPredictor(cs!, inFit, b_, off, e_);
  // Joint alpha: its score sums come out of the same pass as the deviance.
  const joint = !!options.alphaStep && cells !== null && countIndex(y) !== null && alpha > 0;
  let sums = alphaSumsAt(y, alpha, joint);
  /** New eta and mu at b_, and the deviance there. */
  const evaluate = (b_: Float64Array, e_: Float64Array, m_: Float64Array): number => {
    if (cells && dtab)
      return alpha === 0
        ? predictCellsPoisson(cells, vals, b_, off, e_, m_, pw, dtab)
        : predictCellsNegbin(cells, vals, b_, off, e_, m_, pw, alpha, dtab, sums);
    linpred(b_, e_);
    expInto(e_, inFit, m_);
    return totalDeviance(y, m_, e_, pw, inFit, alpha, dtab);
  };
  const ws = options.workspace;
  const eta = ws?.eta?.length === n ? ws.eta : new Float64Array(n);
  const mu = ws?.mu?.length === n ? ws.mu : new Float64Array(n);
  if (ws) {
    ws.eta = eta;
    ws.mu = mu;
  }
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
      order.forEach((c, k) => {
        if (c !== m.interceptCol) betaS[ic] += setup.center[c] * (betaS[k] / setup.scale[c]);
      });
    }
    haveBeta = ok;
  }
  if (haveBeta) {
    linpred(betaS, eta);
    for (let i = 0; i < n; i++) mu[i] = inFit[i] ? Math.exp(eta[i]) : 0;
  } else {
    for (let i = 0; i < n; i++) {
      if (!inFit[i]) {
        mu[i] = 0;
        eta[i] = -Infinity;
        continue;
      }
      mu[i] = y[i] + 0.1;
      eta[i] = Math.log(mu[i]);
    }
  }
  let dtab = devianceTable(y, alpha);
  let devOld = totalDeviance(y, mu, eta, pw, inFit, alpha, dtab);
  if (!Number.isFinite(devOld) && haveBeta) {
    haveBeta = false;
    for (let i = 0; i < n; i++)
      if (inFit[i]) {
        mu[i] = y[i] + 0.1;
        eta[i] = Math.log(mu[i]);
      }
    devOld = totalDeviance(y, mu, eta, pw, inFit, alpha, dtab);
  }
  // Working weights and responses are stored only on the row-by-row path; the cells compute them as they go.
  const w = cells ? null : new Float64Array(n);
  const z = cells ? null : new Float64Array(n);
  let converged = false;
  let iter = 0;
  let dev = devOld;
  /** X'WX and X'Wz at the current means: working weight mu/V(mu) (log link: dmu/deta = mu) and working response. */
  const workingCrossProducts = (withResponse: boolean) => {
    if (cells) return crossProductsCells(vals, cells, n, q, { mu, eta, off, y, pw, alpha, withResponse }, null);
    workingValues(n, inFit, mu, eta, off, y, pw, alpha, w!, z!);
    return crossProductsCompiled(cs!, n, q, w!, withResponse ? z : null);
  };

  while (iter < control.maxIter) {
    iter++;
    const { a, b } = workingCrossProducts(true);
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
        for (let i = 0; i < n; i++)
          if (inFit[i]) {
            mu[i] = y[i] + 0.1;
            eta[i] = Math.log(mu[i]);
          }
        devOld = totalDeviance(y, mu, eta, pw, inFit, alpha, dtab);
        continue;
      }
      throw new FitError(
        `the IRLS step is not finite at iteration ${iter}; the fitted means overflow. Check for extreme exposures or covariate values.`,
      );
    }
    // Newton decrement: the deviance change this step predicts, Δᵀ(X'WX)Δ.
    let predicted = NaN;
    if (options.stopOnPredicted && haveBeta) {
      predicted = 0;
      const ad = a.data;
      for (let r = 0; r < q; r++) {
        let sr = 0;
        for (let c = 0; c < q; c++) sr += ad[r * q + c] * (cand[c] - betaS[c]);
        predicted += (cand[r] - betaS[r]) * sr;
      }
    }
    // The new means overwrite the current ones: a halved step is evaluated from the coefficients alone.
    dev = evaluate(cand, eta, mu);
    let halvings = 0;
    while ((!Number.isFinite(dev) || (haveBeta && dev > devOld * (1 + 1e-12) + 1e-12)) && halvings < 40) {
      if (!haveBeta) break;
      halvings++;
      const half = new Float64Array(q);
      for (let k = 0; k < q; k++) half[k] = 0.5 * (cand[k] + betaS[k]);
      cand = half;
      dev = evaluate(cand, eta, mu);
    }
    if (!Number.isFinite(dev))
      throw new FitError(
        `the deviance is not finite at IRLS iteration ${iter} even after step-halving; the fitted means overflow. Check for extreme exposures or covariate values.`,
      );
    betaS = cand;
    haveBeta = true;
    const change = Math.abs(dev - devOld) / (Math.abs(dev) + 0.1);
    devOld = dev;
    let alphaSettled = true;
    if (options.alphaStep) {
      // Joint estimation: one step for alpha at the new means, then the deviance at the new alpha.
      const next = options.alphaStep(
        mu,
        alpha,
        joint && sums.alpha === alpha ? alphaDerivativesFromSums(sums.out, alpha) : null,
      );
      if (!(next > 0)) break; // alpha reached the boundary: the caller takes over
      // A step below the settling threshold is not taken: alpha is then final, and so are the pass's sums.
      alphaSettled = Math.abs(Math.log(next / alpha)) < 1e-7;
      if (!alphaSettled) {
        alpha = next;
        dtab = devianceTable(y, alpha);
        dev = totalDeviance(y, mu, eta, pw, inFit, alpha, dtab);
        devOld = dev;
        if (joint) sums = alphaSumsAt(y, alpha, true, sums.out);
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

  // Information at the estimate.
  let covS: SymMatrix = { p: q, data: new Float64Array(q * q).fill(NaN) };
  const t = transformMatrix(m, setup);
  let covariance = covS;
  if (!options.skipCovariance) {
    const { a } = workingCrossProducts(false);
    const l = cholesky(a);
    if (l === null)
      throw new FitError(
        "the information matrix at the estimate is singular; the model cannot be fitted on these rows.",
      );
    covS = choleskyInverse(l, q);
    covariance = congruence(t, covS);
  }
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

  const warnings = driftWarnings(y, mu, inFit);
  return {
    beta,
    status: setup.status,
    estimable: order,
    covariance,
    mu,
    eta,
    deviance: dev,
    iterations: iter,
    converged,
    alpha,
    rowsAtZero: setup.rowsAtZero,
    warnings,
    setup,
    covarianceScaled: covS,
    ...(joint && converged && sums.alpha === alpha
      ? { negbinAtEstimate: { ...alphaDerivativesFromSums(sums.out, alpha), logLik: sums.out[5] } }
      : {}),
  };
}

/** The warning for rows whose fitted mean is numerically 0 although their column was estimated. */
export function driftWarnings(y: Float64Array, mu: Float64Array, inFit: Uint8Array): string[] {
  let tiny = 0;
  for (let i = 0; i < y.length; i++) if (inFit[i] && y[i] === 0 && mu[i] < 1e-10) tiny++;
  return tiny === 0
    ? []
    : [
        `${tiny} row${tiny === 1 ? " has" : "s have"} a fitted mean below 1e-10: some estimates drift toward infinity (a group with no events that the model fits exactly). If it is the reference level of a factor, choose another with --ref.`,
      ];
}

/** eta = offset + Σ β_c x_c on the original scale (NaN coefficients skipped, −∞ propagates). */
export function linearPredictorFrom(m: DesignMatrix, beta: Float64Array, offset: Float64Array): Float64Array {
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
export function rowQuadraticForms(m: DesignMatrix, setup: FitSetup, c: SymMatrix): Float64Array {
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
