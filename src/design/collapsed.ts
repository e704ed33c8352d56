// A design whose rows are patterns merged inside the engine (push-down; see
// io/push-down.ts). The figures that depend on single rows are restored from
// the sums the engine returned with each pattern. For a pattern p with count
// Y, exposure E and mean M = E·exp(x'b), over its rows i (weights w, mean
// mu_i = e_i·exp(x'b)):
//   Σ_i w·[y ln(y/mu_i) − (y − mu_i)] = Y ln(Y/M) − (Y − M) + Σ w·y ln y − Σ w·y ln e_i − Y ln Y + Y ln E,
//   Σ_i w·(y − mu_i)²/mu_i = (E/M)·Σ w·y²/e_i − 2Y + M,
//   Σ_i w·[y ln mu_i − mu_i − ln y!] = Y ln M − M − ln Y! + (Σ w·y ln e_i − Y ln E − Σ w·ln y! + ln Y!),
// so the deviance and the log-likelihood differ from the patterns' by
// constants free of b, and Pearson's chi-square needs Σ w·y²/e_i per pattern.
import { lgamma } from "../math/distributions.js";
import type { Census, PushDownKey } from "../io/push-down.js";
import { PATTERN_COLUMNS } from "../io/push-down.js";
import type { Table } from "../io/table.js";
import { type Design, leftOutNotices } from "./design.js";

function columnAt(table: Table, name: string, rows: Int32Array): Float64Array {
  const c = table.columns.get(name);
  if (c?.kind !== "numeric") throw new Error(`the pattern table has no numeric column ${name}`);
  return Float64Array.from(rows, (i) => c.values[i]);
}

/** The design of a pattern table, stated for the rows it stands for (names and counts as the user gave them). */
export function collapsedDesign(
  design: Design,
  table: Table,
  census: Census,
  by: PushDownKey | "per-iteration",
  names: { exposure?: string; offset?: string; weights?: string },
  /** Per-iteration sums: the rows' weight sum and numeric means (the table is a skeleton). */
  sums?: { observations: number; means: Map<string, number> },
): Design {
  if (sums)
    return {
      ...stated(design, census, names),
      collapsed: {
        by,
        rows: census.used,
        observations: sums.observations,
        weights: null,
        devianceShift: 0,
        logLikShift: 0,
        y2e: null,
        means: sums.means,
      },
    };
  const P = PATTERN_COLUMNS;
  const rowCounts = columnAt(table, P.rows, design.rowIndex);
  const weightSums = columnAt(table, P.weight, design.rowIndex);
  let rows = 0,
    observations = 0;
  for (let p = 0; p < design.n; p++) {
    rows += rowCounts[p];
    observations += weightSums[p];
  }
  let devianceShift = 0,
    logLikShift = 0;
  let y2e: Float64Array | null = null;
  if (by === "covariates") {
    y2e = columnAt(table, P.y2e, design.rowIndex);
    const ylny = columnAt(table, P.ylny, design.rowIndex);
    const ylne = columnAt(table, P.ylne, design.rowIndex);
    const lnf = columnAt(table, P.lnFactorial, design.rowIndex);
    for (let p = 0; p < design.n; p++) {
      const Y = design.y[p],
        lnE = design.offset[p];
      const YlnY = Y > 0 ? Y * Math.log(Y) : 0;
      devianceShift += 2 * (ylny[p] - ylne[p] - YlnY + Y * lnE);
      logLikShift += ylne[p] - Y * lnE - lnf[p] + lgamma(Y + 1);
    }
  }
  return {
    ...stated(design, census, names),
    collapsed: {
      by,
      rows,
      observations,
      weights: by === "covariates" ? weightSums : null,
      devianceShift,
      logLikShift,
      y2e,
    },
  };
}

/** The design's counts, notices and names as for the rows the engine holds. */
function stated(
  design: Design,
  census: Census,
  names: { exposure?: string; offset?: string; weights?: string },
): Design {
  const notices = [...design.notices];
  if (census.missing > 0)
    notices.unshift(
      `${census.missing} row${census.missing === 1 ? " has" : "s have"} a missing value in a column the model uses (counted in the engine) and ${census.missing === 1 ? "was" : "were"} left out`,
    );
  notices.push(...leftOutNotices(census.zeroExposureZeroCount, census.zeroWeight));
  return {
    ...design,
    nRows: census.rows,
    exposure: names.exposure ? design.exposure : null,
    exposureName: names.exposure ?? null,
    offsetName: names.offset ?? null,
    weightsName: names.weights ?? null,
    dropped: {
      missing: census.missing,
      zeroExposureZeroCount: census.zeroExposureZeroCount,
      zeroWeight: census.zeroWeight,
    },
    notices,
  };
}

/** The rows a design's fit uses: its own rows, or those its engine-merged patterns stand for. */
export function rowsUsed(design: Design): number {
  return design.collapsed?.rows ?? design.n;
}

/** A deviance of the design's rows stated for the rows it stands for. */
export function rowDeviance(design: Design, deviance: number): number {
  return deviance + (design.collapsed?.devianceShift ?? 0);
}
