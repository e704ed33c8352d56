// Which predictions a model file's rows get: the plain families' (predict.ts)
// or the excess-zero families' (zero-predict.ts).
import type { PredictionDesign } from "../design/predict-design.js";
import type { ModelFile } from "../io/model-file.js";
import { type PredictOptions, type PredictResult, type PredictedRow, predictRange, predictResult } from "./predict.js";
import { predictZeroRange } from "./zero-predict.js";

/** The predictions of rows from … to − 1 (0-based) of the new rows, for any family. */
export function predictRowRange(
  pd: PredictionDesign,
  saved: ModelFile,
  o: PredictOptions,
  from: number,
  to: number,
): PredictedRow[] {
  return saved.zero_part ? predictZeroRange(pd, saved, o, from, to) : predictRange(pd, saved, o, from, to);
}

/** Predict every new row on this thread. */
export function predictRows(pd: PredictionDesign, saved: ModelFile, o: PredictOptions): PredictResult {
  return predictResult(saved, o, predictRowRange(pd, saved, o, 0, pd.n));
}
