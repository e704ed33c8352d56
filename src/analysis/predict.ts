// The predict command's composition: the new rows' design under a model file,
// their expected counts, limits and flags, and the totals by group.
import { calendarForNewRows, calendarOfSaved } from "../design/calendar.js";
import { naturalCompare } from "../design/naming.js";
import { groupFlags } from "../infer/group-flags.js";
import { type Adjustment, adjust } from "../infer/multiplicity.js";
import { buildPredictionDesign, type PredictionDesign, unpredictableRows } from "../design/predict-design.js";
import { type GroupSummary, summarizeGroups } from "../infer/groups.js";
import type { PredictOptions, PredictResult } from "../infer/predict.js";
import { predictRowsParallel } from "../infer/predict-parallel.js";
import type { ModelFile } from "../io/model-file.js";
import { columnLabels, type Table, tableRows } from "../io/table.js";

export interface PredictAnalysis {
  /** The new rows with any calendar columns the model makes from their dates. */
  table: Table;
  design: PredictionDesign;
  result: PredictResult;
  groups?: GroupSummary;
}

/**
 * Predict the rows of a table under a model file (on two threads when the
 * work is large); with summaryBy, also observed and expected totals by group.
 */
export async function analyzePredict(
  table: Table,
  model: ModelFile,
  options: PredictOptions & {
    summaryBy?: string;
    per: number;
    flagBy?: string[];
    adjust?: Adjustment;
    /** Skip the rows the model cannot predict (missing values, unseen levels), naming them, instead of stopping. */
    skipBad?: boolean;
    /** Columns echoed with every row's prediction. */
    ids?: string[];
  },
): Promise<PredictAnalysis> {
  const skipped = options.skipBad ? unpredictableRows(table, model) : [];
  const skippedRows = new Set(skipped.map((s) => s.row));
  const kept = skipped.length
    ? Int32Array.from({ length: table.nRows }, (_, i) => i).filter((i) => !skippedRows.has(i + 2))
    : null;
  const usable = kept ? tableRows(table, kept) : table;
  // Calendar terms (trend, season, day of week) are made from the new rows' dates as the fit made them.
  const calendar = model.calendar ? calendarForNewRows(usable, calendarOfSaved(model.calendar)) : null;
  const rows = calendar ? calendar.table : usable;
  const built = buildPredictionDesign(rows, model);
  const design = kept ? { ...built, fileRows: Int32Array.from(kept, (i) => i + 2) } : built;
  const result = await predictRowsParallel(design, model, options);
  if (calendar) result.warnings.push(...calendar.warnings);
  const all = Int32Array.from({ length: design.n }, (_, i) => i);
  if (options.skipBad) {
    result.skipped = skipped;
    if (skipped.length)
      result.warnings.push(
        `${skipped.length} row${skipped.length === 1 ? "" : "s"} could not be predicted and ${skipped.length === 1 ? "was" : "were"} skipped: ${skipped
          .slice(0, 5)
          .map((s) => `row ${s.row} (${s.reason})`)
          .join("; ")}${skipped.length > 5 ? `; and ${skipped.length - 5} more` : ""}`,
      );
  }
  if (options.ids?.length) {
    const labels = options.ids.map((c) => columnLabels(rows, c, all));
    result.rows.forEach((r, i) => {
      r.id = Object.fromEntries(options.ids!.map((c, k) => [c, labels[k][i]]));
    });
  }
  if (options.flagBy?.length) {
    const labels = options.flagBy.map((c) => columnLabels(rows, c, all));
    const index = new Map<string, number>();
    const ids = Int32Array.from({ length: design.n }, (_, i) => {
      const key = labels.map((l) => l[i]).join(" · ");
      let id = index.get(key);
      if (id === undefined) {
        id = index.size;
        index.set(key, id);
      }
      return id;
    });
    const g = groupFlags(design, model, options, options.flagBy, ids, [...index.keys()]);
    result.flag_by = g.by;
    result.groups = g.groups;
    result.group_method = g.method;
    result.chance_flags.groups = g.groups.reduce((a, x) => a + x.flag_chance, 0);
  }
  if (options.adjust && options.adjust !== "none") adjustFlags(result, options.adjust, options.flagLevel);
  result.n_flagged = result.rows.filter((r) => r.flagged).length;
  if (result.groups) result.n_groups_flagged = result.groups.filter((x) => x.flagged).length;
  if (!options.summaryBy) return { table: rows, design, result };
  const groups = summarizeGroups(
    options.summaryBy,
    columnLabels(table, options.summaryBy, all),
    design.observed,
    result.rows.map((r) => r.expected),
    design.exposure,
    options.per,
    options.level,
    naturalCompare,
    model.family === "negbin"
      ? { family: "negbin", alpha: model.alpha ?? 0 }
      : model.family === "quasipoisson"
        ? { family: "quasipoisson", phi: model.dispersion_phi }
        : { family: "poisson" },
  );
  return { table: rows, design, result, groups };
}

/**
 * With an adjustment, the rows (and, separately, the groups) are flagged
 * when their adjusted upper-tail p-value is at most 1 − flag level, so that
 * the flag level bounds the chance of any false flag (Holm) or the expected
 * share of false flags (Benjamini–Hochberg) across the rows or groups tested.
 */
function adjustFlags(result: PredictResult, how: Adjustment, flagLevel: number): void {
  result.adjustment = how;
  const rule = `; with --adjust ${how}, flagged instead when the ${how === "holm" ? "Holm" : "Benjamini–Hochberg"}-adjusted tail probability is at most ${+(1 - flagLevel).toPrecision(6)}`;
  result.method += rule;
  if (result.group_method) result.group_method += rule;
  // Rows and groups are two families of tests, each adjusted on its own.
  for (const units of [result.rows, result.groups ?? []]) {
    const adjusted = adjust(
      units.map((u) => u.upper_tail_p),
      how,
    );
    units.forEach((u, i) => {
      u.adjusted_p = adjusted[i];
      u.flagged = adjusted[i] !== null && adjusted[i]! <= 1 - flagLevel;
    });
  }
}
