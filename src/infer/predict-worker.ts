// Worker thread of predict-parallel.ts: predicts its range of rows and sends them back.
import { parentPort, workerData } from "node:worker_threads";
import type { PredictionDesign } from "../design/predict-design.js";
import type { ModelFile } from "../io/model-file.js";
import type { PredictOptions } from "./predict.js";
import { predictRowRange } from "./predict-range.js";

const { pd, saved, o, from, to } = workerData as {
  pd: PredictionDesign;
  saved: ModelFile;
  o: PredictOptions;
  from: number;
  to: number;
};
parentPort!.postMessage({ rows: predictRowRange(pd, saved, o, from, to) });
