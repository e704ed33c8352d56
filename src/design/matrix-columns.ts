// Column-wise operations on the row-sparse design matrix, on the original scale.
import type { DesignMatrix } from "./design.js";

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
