// The constrained fits behind term tests and profile limits are independent
// of each other, so they can run on two cores: this thread and one worker
// thread take jobs in turn from a shared counter (Atomics.add), and the
// results are put back in job order. The same functions compute each job
// either way, so the report does not depend on where a job ran.
import { availableParallelism } from "node:os";
import { Worker } from "node:worker_threads";
import { FitError, InputError } from "../errors.js";
import { withoutPassHelper } from "../fit/kernel/pass-team.js";
import type { Workspace } from "../fit/kernel/types.js";
import { profileOf, type ProfileContext } from "./intervals.js";
import { shareLargeArrays } from "./shared-plan.js";
import type { ProfileResult } from "./profile.js";
import { termTestOf, type TermTest, type TermTestContext } from "./terms.js";

export type InferenceJob = { kind: "profile"; col: number } | { kind: "term"; index: number };
export type JobResult = ProfileResult | TermTest;

export interface InferencePlan {
  profiles: ProfileContext | null;
  terms: TermTestContext | null;
  jobs: InferenceJob[];
}

/** Profile jobs first (each is many fits), then the term tests, so the two threads finish close together. */
export function inferencePlan(profiles: ProfileContext | null, terms: TermTestContext | null): InferencePlan {
  const jobs: InferenceJob[] = [];
  if (profiles) for (const col of profiles.columns) jobs.push({ kind: "profile", col });
  if (terms) terms.plan.forEach((_, index) => jobs.push({ kind: "term", index }));
  return { profiles, terms, jobs };
}

/** One job; a thread passes the same workspace to all its jobs, so their fits reuse one pair of row-length arrays. */
export function runJob(plan: InferencePlan, job: InferenceJob, workspace?: Workspace): JobResult {
  return job.kind === "profile"
    ? profileOf(plan.profiles!, job.col, workspace)
    : termTestOf(plan.terms!, job.index, workspace);
}

/** Take jobs from the shared counter until none are left; results by job index. */
export function takeJobs(
  plan: InferencePlan,
  counter: Int32Array,
  out: Map<number, JobResult>,
  onJob?: (taken: number, total: number) => void,
): void {
  const workspace: Workspace = {};
  for (;;) {
    const j = Atomics.add(counter, 0, 1);
    if (j >= plan.jobs.length) return;
    // Jobs taken by both threads so far (the shared counter), for progress.
    onJob?.(Math.min(j + 1, plan.jobs.length), plan.jobs.length);
    out.set(j, runJob(plan, plan.jobs[j], workspace));
  }
}

/**
 * Below this much work (rows × IRLS passes, about 24 per profile limit pair
 * and 4 per term test, three times as many with NB2's alpha re-estimated)
 * a second thread costs more than it saves: starting it, copying the design
 * and its code still cold take some 200–300 ms. Measured (bench data, five
 * term tests): the Poisson over 420,000 patterns (8.4M) took 2.75 s with the
 * worker and 2.58 s without (medians of 6 alternating runs); NB2 on 1M rows
 * (60M) 4.51 s with it and 4.73 s without.
 */
export const PARALLEL_MIN_WORK = 1e7;
/**
 * Above this many rows, a second thread's own arrays cost too much memory. The
 * design and the fit are shared, not copied (rowArray, shared-plan.ts), but
 * each thread refits with its own eta, mu and count codes. At 10 million rows
 * NB2's five term tests on two threads took 21.9–27.8 s at 1.83–1.89 GB; one
 * thread, its passes split with the helper (pass-team.ts), 26.5 s at 1.21 GB.
 */
export const PARALLEL_MAX_ROWS = 4000000;

/** Whether to use a worker thread: enough work, a second core, and TALLYFIT_WORKERS not 0 (1 forces it). */
export function wantWorker(plan: InferencePlan, env: NodeJS.ProcessEnv = process.env): boolean {
  const ctx = plan.profiles ?? plan.terms;
  if (!ctx || plan.jobs.length < 2 || env.TALLYFIT_WORKERS === "0") return false;
  const n = ctx.design.n;
  const negbin = ctx.base.family === "negbin" && !!ctx.base.negbin && !ctx.base.negbin.boundary;
  const passes = plan.jobs.reduce((a, j) => a + (j.kind === "profile" ? 24 : 4) * (negbin ? 3 : 1), 0);
  return (
    (n * passes >= PARALLEL_MIN_WORK || env.TALLYFIT_WORKERS === "1") &&
    n <= PARALLEL_MAX_ROWS &&
    availableParallelism() >= 2
  );
}

interface WorkerReply {
  results?: [number, JobResult][];
  error?: { kind: string; message: string };
}

/**
 * Run the plan's jobs, on this thread and (when wantWorker says so) one
 * worker thread. A job the worker could not finish is run here, and a
 * FitError or InputError from the worker is raised here as the same class.
 * workerOnly (for the tests) leaves every job to the worker.
 */
export async function runJobs(
  plan: InferencePlan,
  useWorker = wantWorker(plan),
  workerOnly = false,
  onJob?: (taken: number, total: number) => void,
): Promise<JobResult[]> {
  const out = new Map<number, JobResult>();
  const counter = new Int32Array(new SharedArrayBuffer(4));
  let reply: Promise<WorkerReply> | null = null;
  let worker: Worker | null = null;
  if (useWorker) {
    // The design and the fit go to the worker in shared memory, not as a copy.
    shareLargeArrays(plan);
    try {
      const w = new Worker(new URL("./parallel-worker.js", import.meta.url), { workerData: { plan, counter } });
      worker = w;
      reply = new Promise<WorkerReply>((resolve) => {
        w.once("message", (m: WorkerReply) => resolve(m));
        w.once("error", (e) => resolve({ error: { kind: "internal", message: String(e) } }));
        w.once("exit", () => resolve({}));
      });
    } catch {
      reply = null;
    }
  }
  try {
    // With a job worker on the second core, this thread's refits keep their passes to themselves.
    if (!(workerOnly && reply))
      if (reply) await withoutPassHelper(async () => takeJobs(plan, counter, out, onJob));
      else takeJobs(plan, counter, out, onJob);
  } catch (e) {
    // This thread's failure decides; do not wait for the worker's jobs.
    if (worker) void worker.terminate();
    throw e;
  }
  if (reply) {
    const r = await reply;
    if (r.error?.kind === "fit") throw new FitError(r.error.message);
    if (r.error?.kind === "input") throw new InputError(r.error.message);
    for (const [j, res] of r.results ?? []) out.set(j, res);
  }
  // Anything the worker took but did not return (it failed to start or crashed) is computed here.
  return plan.jobs.map((job, j) => out.get(j) ?? runJob(plan, job));
}
