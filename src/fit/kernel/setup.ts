// Screening and conditioning before IRLS (built once per setup), and the
// setup's layouts, built on first use.
import { rowArray } from "../../math/shared-arrays.js";
import type { DesignMatrix } from "../../design/design.js";
import { screenRank } from "../../math/linalg.js";
import { crossProductsCells, crossProductsCompiled } from "./cross-products.js";
import {
  buildCells,
  type CellLayout,
  type CompiledSlot,
  compileSlots,
  maxCellsFor,
  recellPositions,
  type ScaledValues,
  scaledValues,
} from "./layout.js";
import type { CoefStatus, FitData, FitSetup } from "./types.js";

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
  const inFit = rowArray(Uint8Array, n).fill(1);
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

export function compiledOf(m: DesignMatrix, setup: FitSetup): CompiledSlot[] {
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

/** The setup's cells, built or derived from its parent's on first use (null: too many to help). */
export function cellsOf(m: DesignMatrix, setup: FitSetup): CellLayout | null {
  if (setup.cells === undefined)
    setup.cells = setup.parentCells
      ? recellPositions(m, setup.parentCells, setup.active)
      : setup.parentCells === null
        ? null
        : buildCells(m, setup.inFit, setup.active, maxCellsFor(m.n));
  return setup.cells;
}

export function slotValuesOf(m: DesignMatrix, setup: FitSetup): (ScaledValues | null)[] {
  if (!setup.slotValues) setup.slotValues = scaledValues(m, setup.center, setup.scale);
  return setup.slotValues;
}
