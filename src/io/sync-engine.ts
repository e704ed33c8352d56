// An engine's queries as blocking calls, for the numerical routines that ask
// for one aggregate after another (the per-iteration sums of IRLS inside a
// root finder): a worker thread holds the connection and runs each query;
// this thread waits on a shared flag (Atomics.wait) and takes the answer from
// the port (receiveMessageOnPort).
import { MessageChannel, receiveMessageOnPort, Worker } from "node:worker_threads";
import { InputError } from "../errors.js";
import type { EngineRows } from "./engine.js";
import type { EngineTarget } from "./open-engine.js";

export interface SyncEngine {
  run(sql: string, params?: number[]): EngineRows;
  /** Queries run so far, and the rows they returned. */
  queries: number;
  rows: number;
  close(): void;
}

export function openSyncEngine(target: EngineTarget): SyncEngine {
  const flag = new Int32Array(new SharedArrayBuffer(4));
  const { port1, port2 } = new MessageChannel();
  const worker = new Worker(new URL("./engine-worker.js", import.meta.url), {
    workerData: { target, port: port2, flag },
    transferList: [port2],
  });
  worker.unref();
  const call = (message: unknown): Record<string, unknown> => {
    Atomics.store(flag, 0, 0);
    worker.postMessage(message);
    // A query that never answers is bounded by the engine's own timeouts; this wait is a backstop.
    if (Atomics.wait(flag, 0, 0, 3_600_000) === "timed-out")
      throw new InputError("the engine did not answer within an hour.");
    const reply = receiveMessageOnPort(port1);
    if (!reply) throw new InputError("the engine's worker stopped without an answer.");
    return reply.message as Record<string, unknown>;
  };
  const self: SyncEngine = {
    queries: 0,
    rows: 0,
    run(sql, params = []) {
      self.queries++;
      const m = call({ sql, params });
      if (typeof m.error === "string") throw new InputError(m.error);
      const rows = m.rows as EngineRows;
      self.rows += rows.columns[0]?.length ?? 0;
      return rows;
    },
    close() {
      call({ close: true });
      port1.close();
      void worker.terminate();
    },
  };
  return self;
}
