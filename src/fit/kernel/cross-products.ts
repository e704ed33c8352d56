// X'WX and X'Wz, the cross-products every IRLS iteration solves: from the
// cell sums or row by row (the passes that run every iteration).
import type { SymMatrix } from "../../math/linalg.js";
import type { CellLayout, CompiledSlot, ScaledValues } from "./layout.js";

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

/** The per-cell sums X'WX and X'Wz are assembled from: Σw, Σw·v, Σw·v·v' and Σw·z, Σw·v·z over the numeric slots. */
export interface CellSums {
  s0: Float64Array;
  s1: Float64Array;
  s2: Float64Array;
  z0: Float64Array;
  z1: Float64Array;
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
  return assembleCellSums(slotVals, L, q, cellSums(slotVals, L, 0, n, w, z));
}

/** The cell sums over rows [from, to) (see crossProductsCells). */
export function cellSums(
  slotVals: (ScaledValues | null)[],
  L: CellLayout,
  from: number,
  to: number,
  w: Float64Array | WorkingInputs | null,
  z: Float64Array | null,
): CellSums {
  const M = L.numeric.length;
  if (M <= 2 && w !== null && !(w instanceof Float64Array) && w.pw === null)
    return workingCellSums(slotVals, L, from, to, w);
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
  for (let i = from; i < to; i++) {
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
  return { s0, s1, s2, z0, z1 };
}

// The cell sums from the means without prior weights, written out for zero,
// one and two numeric slots: the pass that runs every iteration over every
// row, without the general loop over the slots, and with each cell's sums
// side by side (Σw, Σwz, then per slot Σwv, Σwvz, then the M(M + 1)/2
// products Σwvv'). The same operations in the same order as cellSums' loop,
// so the same sums to the last bit.

/** The cell sums over rows [from, to) from the working inputs (no prior weights, at most two numeric slots). */
function workingCellSums(
  slotVals: (ScaledValues | null)[],
  L: CellLayout,
  from: number,
  to: number,
  work: WorkingInputs,
): CellSums {
  const M = L.numeric.length;
  const MM = (M * (M + 1)) / 2;
  const C = L.nCells,
    K = 2 + 2 * M + MM;
  const S = new Float64Array(C * K);
  const { mu, eta, off, y, alpha, withResponse } = work;
  const cell = L.cell;
  const v0 = M > 0 ? slotVals[L.numeric[0]]! : null,
    v1 = M > 1 ? slotVals[L.numeric[1]]! : null;
  const r0 = v0 ? v0.raw : mu,
    c0 = v0 ? v0.center : 0,
    i0 = v0 ? 1 / v0.scale : 0;
  const r1 = v1 ? v1.raw : mu,
    c1 = v1 ? v1.center : 0,
    i1 = v1 ? 1 / v1.scale : 0;
  if (M === 0)
    for (let i = from; i < to; i++) {
      const c = cell[i];
      if (c < 0) continue;
      const m = mu[i],
        wi = alpha === 0 ? m : m / (1 + alpha * m);
      if (wi === 0) continue;
      const zi = withResponse ? eta[i] - off[i] + (y[i] - m) / m : 0;
      const k = 2 * c;
      S[k] += wi;
      S[k + 1] += wi * zi;
    }
  else if (M === 1)
    for (let i = from; i < to; i++) {
      const c = cell[i];
      if (c < 0) continue;
      const m = mu[i],
        wi = alpha === 0 ? m : m / (1 + alpha * m);
      if (wi === 0) continue;
      const zi = withResponse ? eta[i] - off[i] + (y[i] - m) / m : 0;
      const a = (r0[i] - c0) * i0,
        wa = wi * a,
        k = 5 * c;
      S[k] += wi;
      S[k + 1] += wi * zi;
      S[k + 2] += wa;
      S[k + 3] += wa * zi;
      S[k + 4] += wa * a;
    }
  else
    for (let i = from; i < to; i++) {
      const c = cell[i];
      if (c < 0) continue;
      const m = mu[i],
        wi = alpha === 0 ? m : m / (1 + alpha * m);
      if (wi === 0) continue;
      const zi = withResponse ? eta[i] - off[i] + (y[i] - m) / m : 0;
      const a = (r0[i] - c0) * i0,
        b = (r1[i] - c1) * i1,
        wa = wi * a,
        wb = wi * b,
        k = 9 * c;
      S[k] += wi;
      S[k + 1] += wi * zi;
      S[k + 2] += wa;
      S[k + 3] += wa * zi;
      S[k + 4] += wb;
      S[k + 5] += wb * zi;
      S[k + 6] += wa * a;
      S[k + 7] += wb * a;
      S[k + 8] += wb * b;
    }
  // Unpacked into the layout of cellSums.
  const out: CellSums = {
    s0: new Float64Array(C),
    s1: new Float64Array(C * M),
    s2: new Float64Array(C * MM),
    z0: new Float64Array(C),
    z1: new Float64Array(C * M),
  };
  for (let c = 0; c < C; c++) {
    const k = K * c;
    out.s0[c] = S[k];
    out.z0[c] = S[k + 1];
    for (let j = 0; j < M; j++) {
      out.s1[c * M + j] = S[k + 2 + 2 * j];
      out.z1[c * M + j] = S[k + 3 + 2 * j];
    }
    for (let t = 0; t < MM; t++) out.s2[c * MM + t] = S[k + 2 + 2 * M + t];
  }
  return out;
}

/** Add the sums of a later row range to those of an earlier one (in place, always in this order). */
export function addCellSums(into: CellSums, later: CellSums): void {
  for (const k of ["s0", "s1", "s2", "z0", "z1"] as const) {
    const a = into[k],
      b = later[k];
    for (let j = 0; j < a.length; j++) a[j] += b[j];
  }
}

/** X'WX and X'Wz from the cell sums. */
export function assembleCellSums(
  slotVals: (ScaledValues | null)[],
  L: CellLayout,
  q: number,
  sums: CellSums,
): { a: SymMatrix; b: Float64Array } {
  const { s0, s1, s2, z0, z1 } = sums;
  const M = L.numeric.length;
  const MM = (M * (M + 1)) / 2;
  const C = L.nCells;
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

export function workingValues(
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
