// Worker thread of parallel.ts: takes jobs from the shared counter and sends back its results.
import { parentPort, workerData } from "node:worker_threads";
import { FitError, InputError } from "../errors.js";
import { takeJobs, type InferencePlan, type JobResult } from "./parallel.js";

const { plan, counter } = workerData as { plan: InferencePlan; counter: Int32Array };
const out = new Map<number, JobResult>();
try {
  takeJobs(plan, counter, out);
  parentPort!.postMessage({ results: [...out] });
} catch (e) {
  const kind = e instanceof FitError ? "fit" : e instanceof InputError ? "input" : "internal";
  parentPort!.postMessage({ results: [...out], error: { kind, message: (e as Error).message } });
}
