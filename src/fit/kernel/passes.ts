// The passes that follow every IRLS step: eta = offset + X·beta', mu = exp(eta)
// and the deviance (McCullagh and Nelder 1989, §2.5), on the cell layout or
// row by row, with the NB2 pass also accumulating alpha's score sums.
import type { CountTable } from "../count-table.js";

/** What the passes read of a CountTable: the counts and the per-count tables at one alpha. */
export type PassTables = Pick<CountTable, "counts" | "ylogy" | "negbinDeviance">;
import type { CellLayout, CompiledSlot, ScaledValues } from "./layout.js";

/** The per-cell constants of eta = offset + X·beta' (see CellLayout): the indicator part and each numeric slot's coefficient. */
export function cellCoefficients(L: CellLayout, slotVals: (ScaledValues | null)[], betaS: Float64Array) {
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

/**
 * eta = offset + X·beta' from the cells: a constant per cell plus the numeric
 * slots (−∞ for rows out of the fit), over rows [from, to) (every pass takes
 * a row range, so that two threads can share it: pass-team.ts).
 */
export function linearPredictorCells(
  L: CellLayout,
  slotVals: (ScaledValues | null)[],
  betaS: Float64Array,
  off: Float64Array,
  eta: Float64Array,
  from = 0,
  to = off.length,
): void {
  const { M, cst, coef, raws, cens } = cellCoefficients(L, slotVals, betaS);
  const r0 = M > 0 ? raws[0] : off,
    c0 = M > 0 ? cens[0] : 0;
  const r1 = M > 1 ? raws[1] : off,
    c1 = M > 1 ? cens[1] : 0;
  const cell = L.cell;
  for (let i = from; i < to; i++) {
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
export function predictCellsPoisson(
  L: CellLayout,
  slotVals: (ScaledValues | null)[],
  betaS: Float64Array,
  off: Float64Array,
  eta: Float64Array,
  mu: Float64Array,
  pw: Float64Array | null,
  tab: PassTables,
  from = 0,
  to = eta.length,
): number {
  const p = etaInPass(L, slotVals, betaS, off, eta, from, to);
  const cell = L.cell,
    yl = tab.ylogy,
    cnt = tab.counts;
  let d = 0;
  for (let i = from; i < to; i++) {
    const c = cell[i];
    if (c < 0) {
      eta[i] = -Infinity;
      mu[i] = 0;
      continue;
    }
    const e = rowEta(p, off, eta, i, c);
    const mi = Math.exp(e);
    mu[i] = mi;
    const y = cnt[i];
    const wi = pw === null ? 1 : pw[i];
    d += wi * (yl[y] - y * e - (y - mi));
  }
  return 2 * d;
}

/** Per-count tables at one alpha, and what the joint pass accumulates: the five alpha sums, then the log-likelihood. */
export interface AlphaSums {
  alpha: number;
  want: boolean;
  d: Float64Array;
  e: Float64Array;
  lgammaTerms: Float64Array;
  out: Float64Array;
}

export function alphaSumsAt(
  table: CountTable | null,
  alpha: number,
  want: boolean,
  out: Float64Array = new Float64Array(6),
): AlphaSums {
  if (!want || table === null)
    return { alpha, want, d: new Float64Array(0), e: new Float64Array(0), lgammaTerms: new Float64Array(0), out };
  return { alpha, want, ...table.harmonic, lgammaTerms: table.logLikTerms, out };
}

/**
 * The NB2 twin of predictCellsPoisson; when sums.want, it also accumulates
 * the five sums of alphaDerivativesFromSums and the NB2 log-likelihood at this
 * alpha and the new means (the joint alpha step needs them, and the pass
 * computes log(1 + alpha·mu) anyway).
 */
export function predictCellsNegbin(
  L: CellLayout,
  slotVals: (ScaledValues | null)[],
  betaS: Float64Array,
  off: Float64Array,
  eta: Float64Array,
  mu: Float64Array,
  pw: Float64Array | null,
  alpha: number,
  tab: PassTables,
  sums: AlphaSums,
  from = 0,
  to = eta.length,
): number {
  const p = etaInPass(L, slotVals, betaS, off, eta, from, to);
  const cell = L.cell,
    yl = tab.ylogy,
    cnt = tab.counts,
    nb = tab.negbinDeviance,
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
  for (let i = from; i < to; i++) {
    const c = cell[i];
    if (c < 0) {
      eta[i] = -Infinity;
      mu[i] = 0;
      continue;
    }
    const e = rowEta(p, off, eta, i, c);
    const mi = Math.exp(e);
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

const NONE = new Float64Array(0);

type EtaPass = ReturnType<typeof etaInPass>;

/** Row i's eta in a predict pass (its cell c ≥ 0): the one linearPredictorCells wrote when M < 0, else computed here and written. */
function rowEta(p: EtaPass, off: Float64Array, eta: Float64Array, i: number, c: number): number {
  if (p.M < 0) return eta[i];
  let e = off[i] + p.cst[c];
  if (p.M === 1) e += p.k0[c] * (p.r0[i] - p.c0);
  else if (p.M === 2) e += p.k0[c] * (p.r0[i] - p.c0) + p.k1[c] * (p.r1[i] - p.c1);
  eta[i] = e;
  return e;
}

/**
 * How a predict pass gets eta: for at most two numeric slots, in its own loop
 * from the per-cell coefficients (zero where a slot is absent), with the same
 * operations as linearPredictorCells, so the same bits and no second read of
 * eta; for more (M = −1), linearPredictorCells writes eta first.
 */
function etaInPass(
  L: CellLayout,
  slotVals: (ScaledValues | null)[],
  betaS: Float64Array,
  off: Float64Array,
  eta: Float64Array,
  from: number,
  to: number,
) {
  if (L.numeric.length > 2) {
    linearPredictorCells(L, slotVals, betaS, off, eta, from, to);
    return { M: -1, cst: NONE, k0: NONE, k1: NONE, r0: off, c0: 0, r1: off, c1: 0 };
  }
  const { M, cst, coef, raws, cens } = cellCoefficients(L, slotVals, betaS);
  const C = L.nCells;
  const k0 = new Float64Array(C),
    k1 = new Float64Array(C);
  for (let c = 0; c < C; c++) {
    if (M > 0) k0[c] = coef[c * M];
    if (M > 1) k1[c] = coef[c * M + 1];
  }
  return {
    M,
    cst,
    k0,
    k1,
    r0: M > 0 ? raws[0] : off,
    c0: M > 0 ? cens[0] : 0,
    r1: M > 1 ? raws[1] : off,
    c1: M > 1 ? cens[1] : 0,
  };
}

/** eta = offset + X·beta' (scaled coordinates) over the rows in the fit. */
export function linearPredictor(
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

export function expInto(eta: Float64Array, inFit: Uint8Array, mu: Float64Array): void {
  for (let i = 0; i < eta.length; i++) mu[i] = inFit[i] ? Math.exp(eta[i]) : 0;
}
