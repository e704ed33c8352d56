// Two threads for one IRLS pass: rows [0, h) on this thread, [h, n) on a
// helper thread (pass-helper.ts), which waits on a shared flag (Atomics.wait)
// for the next pass and answers on a port. Whether a pass is split depends on
// its row count only, never on the threads: without a helper (one core,
// TALLYFIT_WORKERS=0, inside a worker, a helper still starting) this thread
// runs both halves itself, and the halves' sums are added in the same order,
// so the results are the same to the last bit either way.
import { availableParallelism } from "node:os";
import { env } from "node:process";
import { isMainThread, MessageChannel, type MessagePort, receiveMessageOnPort, Worker } from "node:worker_threads";
import { isShared, SHARED_MIN_ROWS, sharedFloat64 } from "../../math/shared-arrays.js";
import { type PassContext, type PassMessage, type PassReply, runPass } from "./pass-range.js";

/**
 * Passes over this many rows or more are split in two: the size from which
 * row-length arrays are born in shared memory (TALLYFIT_PASS_SPLIT_ROWS
 * overrides it, for the tests).
 */
export const PASS_SPLIT_ROWS = SHARED_MIN_ROWS;

/** Where a pass over n rows is split: 0 when it is not. */
export function passSplit(n: number): number {
  const min = Number(env.TALLYFIT_PASS_SPLIT_ROWS) || PASS_SPLIT_ROWS;
  return n >= min ? n >>> 1 : 0;
}

/**
 * A row-length array that a fit rewrites and its passes read: in shared memory
 * when passes over n rows are split, so that the helper thread reads it, and
 * writes its half of eta and mu, in place (never a copy, which would go stale
 * when the array is rewritten).
 */
export function passRowArray(n: number): Float64Array {
  return passSplit(n) > 0 ? sharedFloat64(n) : new Float64Array(n);
}

let suspended = 0;

/** Run f without the helper (while another worker thread already keeps the second core busy). */
export async function withoutPassHelper<T>(f: () => Promise<T>): Promise<T> {
  suspended++;
  try {
    return await f();
  } finally {
    suspended--;
  }
}

interface Helper {
  worker: Worker;
  port: MessagePort;
  /** [0] passes sent, [1] passes answered, [2] 1 once the helper waits for work. */
  ctl: Int32Array;
  sent: number;
  owner: object | null;
  context: PassContext | null;
}

/** null: not started yet; "none": no helper in this process (one core, or it failed to start or broke). */
let helper: Helper | "none" | null = null;

function startHelper(): Helper | null {
  if (availableParallelism() < 2 && env.TALLYFIT_WORKERS !== "1") return null;
  const ctl = new Int32Array(new SharedArrayBuffer(12));
  const { port1, port2 } = new MessageChannel();
  try {
    const worker = new Worker(new URL("./pass-helper.js", import.meta.url), {
      workerData: { port: port2, ctl },
      transferList: [port2],
    });
    worker.unref();
    worker.on("error", () => {
      helper = "none";
    });
    return { worker, port: port1, ctl, sent: 0, owner: null, context: null };
  } catch {
    return null;
  }
}

/**
 * The helper, when one can take a pass now: started on first call, and not
 * waited for until it is ready (this thread runs both halves meanwhile), except
 * with TALLYFIT_WORKERS=1 (the tests), which waits for it.
 */
function readyHelper(): Helper | null {
  if (suspended > 0 || !isMainThread || env.TALLYFIT_WORKERS === "0") return null;
  if (helper === null) helper = startHelper() ?? "none";
  if (helper === "none") return null;
  if (env.TALLYFIT_WORKERS === "1") Atomics.wait(helper.ctl, 2, 0, 30000);
  return Atomics.load(helper.ctl, 2) === 1 ? helper : null;
}

/** Passes whose second half the helper thread has computed so far (for the tests). */
export function helperPasses(): number {
  return helper === null || helper === "none" ? 0 : Atomics.load(helper.ctl, 1);
}

/** Forget a fit's arrays in the helper (they can then be collected). */
export function releasePassContext(owner: object): void {
  if (helper !== null && helper !== "none" && helper.owner === owner) {
    helper.port.postMessage({ type: "drop" });
    helper.owner = null;
    helper.context = null;
  }
}

/**
 * Run the two halves of a pass: `local` is the context on this thread, and
 * `shared()` the same arrays in shared memory for the helper (built only when
 * a helper takes the second half; eta and mu must already be shared, as the
 * helper writes them).
 */
export function splitPass(
  owner: object,
  local: PassContext,
  shared: () => PassContext | null,
  message: (from: number, to: number) => PassMessage,
  h: number,
  n: number,
): [PassReply, PassReply] {
  const hp = isShared(local.eta) && isShared(local.mu) ? readyHelper() : null;
  const ctx = hp ? shared() : null;
  if (hp === null || ctx === null) return [runPass(local, message(0, h)), runPass(local, message(h, n))];
  if (hp.owner !== owner || hp.context !== ctx) {
    hp.port.postMessage({ type: "context", context: ctx });
    hp.owner = owner;
    hp.context = ctx;
  }
  const seq = ++hp.sent;
  hp.port.postMessage({ type: "pass", seq, pass: message(h, n) });
  Atomics.store(hp.ctl, 0, seq);
  Atomics.notify(hp.ctl, 0);
  const first = runPass(local, message(0, h));
  for (let waited = 0; Atomics.load(hp.ctl, 1) < seq; ) {
    if (Atomics.wait(hp.ctl, 1, Atomics.load(hp.ctl, 1), 1000) === "timed-out" && ++waited >= 600) break;
  }
  const reply = Atomics.load(hp.ctl, 1) >= seq ? receiveMessageOnPort(hp.port)?.message : undefined;
  if (!reply || (reply as { error?: string }).error !== undefined) {
    // The helper failed: this thread takes the second half from now on.
    helper = "none";
    void hp.worker.terminate();
    return [first, runPass(local, message(h, n))];
  }
  return [first, reply as PassReply];
}
