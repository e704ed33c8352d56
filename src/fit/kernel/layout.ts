// Layouts of the design matrix for the IRLS passes, built once per setup:
// slots compiled against the estimated columns (the row-by-row path), and rows
// grouped by column pattern into cells (the cell path).
import type { DesignMatrix } from "../../design/design.js";
import { rowArray } from "../../math/shared-arrays.js";

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
 * A slot's values as the fit sees them, (raw − center)/scale, computed where
 * they are used instead of stored (a copy per slot would cost as much memory
 * as the column itself).
 */
export interface ScaledValues {
  raw: Float64Array;
  center: number;
  scale: number;
}

export function scaledValues(m: DesignMatrix, center: Float64Array, scale: Float64Array): (ScaledValues | null)[] {
  // Centre and scale are shared by all columns of a slot.
  return m.slots.map((s) =>
    s.values === null ? null : { raw: s.values, center: center[s.colStart], scale: scale[s.colStart] },
  );
}

/** More cells than this and the row-by-row path is used instead. */
export function maxCellsFor(n: number): number {
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
  const cell = rowArray(Int32Array, n);
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
export function recellPositions(m: DesignMatrix, parent: CellLayout, active: Int32Array): CellLayout {
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
