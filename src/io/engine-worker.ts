// Worker thread of sync-engine.ts: holds the engine's connection and runs each
// query the main thread sends, answering on the port and waking the waiting
// thread through the shared flag.
import { type MessagePort, parentPort, workerData } from "node:worker_threads";
import { type EngineTarget, openEngine } from "./open-engine.js";

const { target, port, flag } = workerData as { target: EngineTarget; port: MessagePort; flag: Int32Array };

function answer(message: unknown): void {
  port.postMessage(message);
  Atomics.store(flag, 0, 1);
  Atomics.notify(flag, 0);
}

const engine = openEngine(target).then((o) => o.engine);
engine.catch(() => {});
parentPort!.on("message", async (m: { sql: string; params: number[] } | { close: true }) => {
  try {
    const e = await engine;
    if ("close" in m) {
      await e.close();
      answer({ closed: true });
      return;
    }
    answer({ rows: await e.run(m.sql, m.params) });
  } catch (err) {
    answer({ error: (err as Error).message });
  }
});
