// The predict command's composition: the new rows' design under a model file,
// their expected counts, limits and flags, and the totals by group.
import { calendarForNewRows, calendarOfSaved } from "../design/calendar.js";
import { naturalCompare } from "../design/naming.js";
import { buildPredictionDesign, type PredictionDesign } from "../design/predict-design.js";
import { type GroupSummary, summarizeGroups } from "../infer/groups.js";
import type { PredictOptions, PredictResult } from "../infer/predict.js";
import { predictRowsParallel } from "../infer/predict-parallel.js";
import type { ModelFile } from "../io/model-file.js";
import { columnLabels, type Table } from "../io/table.js";

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
  options: PredictOptions & { summaryBy?: string; per: number },
): Promise<PredictAnalysis> {
  // Calendar terms (trend, season, day of week) are made from the new rows' dates as the fit made them.
  const calendar = model.calendar ? calendarForNewRows(table, calendarOfSaved(model.calendar)) : null;
  const rows = calendar ? calendar.table : table;
  const design = buildPredictionDesign(rows, model);
  const result = await predictRowsParallel(design, model, options);
  if (calendar) result.warnings.push(...calendar.warnings);
  if (!options.summaryBy) return { table: rows, design, result };
  const all = Int32Array.from({ length: design.n }, (_, i) => i);
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
