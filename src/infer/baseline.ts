// The baseline rate a report states: exp(Σ_c x_c·β_c) per unit of exposure at
// the reference level of every factor and at chosen values of the numeric
// terms (--baseline-at COL=VALUE; by default each numeric term's mean over
// the rows used, so that the rate describes a typical row rather than a
// value of 0 that may never occur), with a Wald interval from gᵀVg, g = x.
import type { Design } from "../design/design.js";
import { columnValues } from "../design/matrix-columns.js";
import type { SymMatrix } from "../math/linalg.js";

export interface Baseline {
  rate: number;
  wald: [number, number];
  per: string | null;
  /** The numeric terms' values the rate is stated at, and where each came from. */
  at: { column: string; value: number; source: "mean" | "given" | "zero" }[];
}

/** Means over the rows used of the numeric main-effect columns (frequency-weighted). */
function numericMeans(design: Design): Map<string, number> {
  const out = new Map<string, number>();
  const given = design.collapsed?.means;
  if (given) {
    design.columns.forEach((col) => {
      if (col.kind === "numeric" && !col.name.includes(":")) out.set(col.name, given.get(col.name) ?? 0);
    });
    return out;
  }
  // Engine-merged covariate patterns weigh by the rows (or weights) each stands for.
  const weights = design.weights ?? design.collapsed?.weights ?? null;
  design.columns.forEach((col, c) => {
    if (col.kind !== "numeric" || col.name.includes(":")) return;
    // A numeric main effect is its slot's values in every row: read them in place (a column copy costs 80 MB at 10M rows).
    const own = design.matrix.slots.find((s) => s.cols === null && s.colStart === c && s.values !== null);
    const v = own ? own.values! : columnValues(design.matrix, c);
    let s = 0,
      w = 0;
    for (let i = 0; i < design.n; i++) {
      const wi = weights ? weights[i] : 1;
      s += wi * v[i];
      w += wi;
    }
    out.set(col.name, w > 0 ? s / w : 0);
  });
  return out;
}

/**
 * The baseline of a fit with an intercept, or null without one (or when the
 * intercept is not estimated). `cov` is final (scaled or robust as
 * reported), over the estimable columns `pos`; `crit` the interval's critical value.
 */
export function baselineOf(
  design: Design,
  beta: Float64Array,
  cov: SymMatrix,
  pos: Map<number, number>,
  crit: number,
  given: Record<string, number>,
): Baseline | null {
  const ic = design.matrix.interceptCol;
  if (ic < 0 || !pos.has(ic)) return null;
  const means = numericMeans(design);
  const numericNames = new Set<string>();
  for (const col of design.columns)
    if (col.kind === "numeric" || col.kind === "slope")
      for (const part of col.name.split(":")) if (!part.includes("=")) numericNames.add(part);
  const at = [...numericNames].map((column) =>
    Object.hasOwn(given, column)
      ? { column, value: given[column], source: "given" as const }
      : means.has(column)
        ? { column, value: means.get(column)!, source: "mean" as const }
        : { column, value: 0, source: "zero" as const },
  );
  const valueAt = new Map(at.map((a) => [a.column, a.value]));
  const refs = new Map(design.factors.map((f) => [f.name, f.reference]));
  // x_c at the baseline: 1 for the intercept; numeric parts at their values; a factor part is 1 only when it is
  // the level itself (an indicator, not a contrast) and that level is the reference.
  const x = design.columns.map((col, c) => {
    if (c === ic) return 1;
    if (col.levels.some((l) => l.contrast || refs.get(l.factor) !== l.level)) return 0;
    let v = 1;
    for (const part of col.name.split(":")) if (!part.includes("=")) v *= valueAt.get(part) ?? 0;
    return v;
  });
  let eta = 0,
    variance = 0;
  x.forEach((xi, c) => {
    if (xi === 0 || !pos.has(c)) return;
    eta += xi * beta[c];
    x.forEach((xj, d) => {
      if (xj !== 0 && pos.has(d)) variance += xi * xj * cov.data[pos.get(c)! * cov.p + pos.get(d)!];
    });
  });
  const se = Math.sqrt(Math.max(variance, 0));
  return {
    rate: Math.exp(eta),
    wald: [Math.exp(eta - crit * se), Math.exp(eta + crit * se)],
    per: design.exposureName,
    at,
  };
}
