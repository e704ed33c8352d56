// Predictions share the second core on large jobs: a worker thread takes the
// second half of the rows, this thread the first. Every row's prediction
// depends only on the model file, the options and the seeded draws (which
// both threads make alike), so the output does not depend on the split.
import { availableParallelism } from "node:os";
import { Worker } from "node:worker_threads";
import type { PredictionDesign } from "../design/predict-design.js";
import type { ModelFile } from "../io/model-file.js";
import { type PredictOptions, type PredictResult, type PredictedRow, predictResult } from "./predict.js";
import { predictRowRange } from "./predict-range.js";

/** Rows × draws below which a worker costs more to start than it saves. */
export const PREDICT_PARALLEL_MIN_WORK = 400_000;

export function wantPredictWorker(n: number, draws: number, env: NodeJS.ProcessEnv = process.env): boolean {
  if (env.TALLYFIT_WORKERS === "0" || n < 2) return false;
  return (n * draws >= PREDICT_PARALLEL_MIN_WORK || env.TALLYFIT_WORKERS === "1") && availableParallelism() >= 2;
}

/** predictRows on two threads when the work is large enough (see wantPredictWorker). */
export async function predictRowsParallel(
  pd: PredictionDesign,
  saved: ModelFile,
  o: PredictOptions,
  useWorker = wantPredictWorker(pd.n, o.draws),
): Promise<PredictResult> {
  if (!useWorker) return predictResult(saved, o, predictRowRange(pd, saved, o, 0, pd.n));
  const mid = Math.ceil(pd.n / 2);
  let reply: Promise<PredictedRow[] | null>;
  try {
    const w = new Worker(new URL("./predict-worker.js", import.meta.url), {
      workerData: { pd, saved, o, from: mid, to: pd.n },
    });
    reply = new Promise((resolve) => {
      w.once("message", (m: { rows?: PredictedRow[] }) => resolve(m.rows ?? null));
      w.once("error", () => resolve(null));
      w.once("exit", () => resolve(null));
    });
  } catch {
    reply = Promise.resolve(null);
  }
  const first = predictRowRange(pd, saved, o, 0, mid);
  // A worker that failed leaves its rows to this thread, which computes them the same way.
  const second = (await reply) ?? predictRowRange(pd, saved, o, mid, pd.n);
  return predictResult(saved, o, [...first, ...second]);
}
