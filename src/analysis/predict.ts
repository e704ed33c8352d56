// The predict command's composition: the new rows' design under a model file,
// their expected counts, limits and flags, and the totals by group.
import { naturalCompare } from "../design/naming.js";
import { buildPredictionDesign, type PredictionDesign } from "../design/predict-design.js";
import { type GroupSummary, summarizeGroups } from "../infer/groups.js";
import type { PredictOptions, PredictResult } from "../infer/predict.js";
import { predictRowsParallel } from "../infer/predict-parallel.js";
import type { ModelFile } from "../io/model-file.js";
import { columnLabels, type Table } from "../io/table.js";

export interface PredictAnalysis {
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
  const design = buildPredictionDesign(table, model);
  const result = await predictRowsParallel(design, model, options);
  if (!options.summaryBy) return { design, result };
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
  return { design, result, groups };
}
