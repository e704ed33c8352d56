// Worker thread of sync-engine.ts: holds the engine's connection and runs each
// query the main thread sends, answering on the port and waking the waiting
// thread through the shared flag.
import { type MessagePort, parentPort, workerData } from "node:worker_threads";
import { openClickHouse } from "./clickhouse-table.js";
import { openDuckDb, openParquet } from "./duckdb-table.js";
import type { Engine } from "./engine.js";
import { openPostgres } from "./postgres-table.js";
import type { EngineTarget } from "./sync-engine.js";

const { target, port, flag } = workerData as { target: EngineTarget; port: MessagePort; flag: Int32Array };

async function open(t: EngineTarget): Promise<Engine> {
  if (t.parquet) return (await openParquet(t.parquet)).engine;
  if (t.db!.startsWith("duckdb:")) return openDuckDb(t.db!, t.sql!);
  if (t.db!.startsWith("clickhouse://")) return openClickHouse(t.db!, t.sql!);
  return openPostgres(t.db!, t.sql!);
}

function answer(message: unknown): void {
  port.postMessage(message);
  Atomics.store(flag, 0, 1);
  Atomics.notify(flag, 0);
}

const engine = open(target);
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
