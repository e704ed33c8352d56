// npm run bench -- --engines [--engine-rows N] [--cluster-rows M]
// The push-down at scale (see src/io/push-down.ts):
//  1. N rows (default 100,000,000) generated once by DuckDB into
//     bench/data/engines_N.parquet (kept for later runs; delete it to start
//     again), then the Poisson fit of a factor model from that file, merged
//     inside embedded DuckDB, side by side with DuckDB's own GROUP BY of the
//     same columns in a process of its own: wall time and peak memory.
//  2. M rows (default 10,000,000) on the two-shard ClickHouse cluster of the
//     tests (test/servers.ts; half the rows on each shard, read through a
//     Distributed table): the factor model by covariate patterns, and a model
//     with a continuous covariate by per-iteration sums (Wald limits).
import { existsSync, mkdirSync } from "node:fs";
import { join } from "node:path";
import { clickHouse, startClickHouseCluster } from "../test/servers.js";

type Runner = (cmd: string, args: string[]) => { seconds: number; rssMB: number | null; stdout: string };

const MODEL = "visits ~ region + agegrp + sex";

/**
 * The generated rows (invented for the bench): three factors and an exposure
 * from hashes of the row number, a continuous covariate, and a count that
 * rises with exposure and region. ClickHouse's dialect.
 */
function clickHouseRowsSql(n: number, shard: number): string {
  const h = (k: number) => `(cityHash64(number * ${k} + ${k}) % 1000000)`;
  return (
    `SELECT concat('r', toString(${h(3)} % 12)) AS region, concat('a', toString(${h(5)} % 6)) AS agegrp, ` +
    `if(${h(7)} % 2 = 0, 'f', 'm') AS sex, 1.0 + (${h(11)} % 100) / 10.0 AS exposure, ${h(13)} / 40000.0 AS outdoor_c, ` +
    `toInt64(floor((1.0 + (${h(11)} % 100) / 10.0) * ((${h(17)} % 5) + (${h(3)} % 12) / 6.0) / 3.0)) AS visits ` +
    `FROM numbers(${n}) WHERE number % 2 = ${shard}`
  );
}

/** The same kind of rows in DuckDB's dialect. */
function duckRowsSql(n: number): string {
  const h = (k: number) => `(hash(range * ${k} + ${k}) % 1000000)`;
  return (
    `SELECT 'r' || CAST(${h(3)} % 12 AS VARCHAR) AS region, 'a' || CAST(${h(5)} % 6 AS VARCHAR) AS agegrp, ` +
    `CASE WHEN ${h(7)} % 2 = 0 THEN 'f' ELSE 'm' END AS sex, 1.0 + (${h(11)} % 100) / 10.0 AS exposure, ` +
    `${h(13)} / 40000.0 AS outdoor_c, ` +
    `CAST(floor((1.0 + (${h(11)} % 100) / 10.0) * ((${h(17)} % 5) + (${h(3)} % 12) / 6.0) / 3.0) AS BIGINT) AS visits ` +
    `FROM range(${n})`
  );
}

export async function enginesBench(run: Runner, bin: string, dataDir: string): Promise<void> {
  const arg = (name: string, dflt: number) => {
    const k = process.argv.indexOf(name);
    return k >= 0 ? Number(process.argv[k + 1]) : dflt;
  };
  const n = arg("--engine-rows", 100_000_000);
  const m = arg("--cluster-rows", 10_000_000);
  mkdirSync(dataDir, { recursive: true });
  const parquet = join(dataDir, `engines_${n}.parquet`);
  const duck =
    "const {DuckDBInstance}=require('@duckdb/node-api');(async()=>{const i=await DuckDBInstance.create(':memory:');const c=await i.connect();";
  if (!existsSync(parquet)) {
    console.log(`generating ${n.toLocaleString("en")} rows into ${parquet} (once)…`);
    const t = run(process.execPath, [
      "-e",
      `${duck}await c.run(\`COPY (${duckRowsSql(n)}) TO '${parquet}' (FORMAT parquet)\`);})()`,
    ]);
    console.log(`  written in ${t.seconds.toFixed(1)} s`);
  }
  const fit = (args: string[]) => run(process.execPath, [bin, "fit", ...args, "--format", "json", "--quiet"]);
  console.log(`\nPoisson ${MODEL}, ${n.toLocaleString("en")} rows of Parquet, merged inside DuckDB`);
  const ours = fit([parquet, "--model", MODEL, "--exposure", "exposure"]);
  const src = JSON.parse(ours.stdout).source;
  const group = run(process.execPath, [
    "-e",
    `${duck}const r=await c.runAndReadAll(\`SELECT region, agegrp, sex, SUM(visits), SUM(exposure), COUNT(*) FROM read_parquet('${parquet}') GROUP BY region, agegrp, sex\`);console.log(r.getRows().length);})()`,
  ]);
  const mem = (t: { rssMB: number | null }) => (t.rssMB === null ? "n/a" : `${t.rssMB.toFixed(0)} MB`);
  console.log(
    `  tallyfit fit (profile limits, term tests): ${ours.seconds.toFixed(2)} s, peak ${mem(ours)}; ${src.rows_transferred} patterns sent, ${src.queries} queries`,
  );
  console.log(`  DuckDB's own GROUP BY, same columns:       ${group.seconds.toFixed(2)} s, peak ${mem(group)}`);
  console.log(`  ratio of times ${(ours.seconds / group.seconds).toFixed(2)}`);

  console.log(`\n${m.toLocaleString("en")} rows on the two-shard ClickHouse cluster (Distributed table)`);
  const cluster = await startClickHouseCluster();
  try {
    const local =
      "CREATE TABLE rows_local (region String, agegrp String, sex String, exposure Float64, outdoor_c Float64, visits Int64) ENGINE = MergeTree() ORDER BY tuple()";
    for (const [k, http] of cluster.http.entries()) {
      await clickHouse(http, local);
      await clickHouse(http, `INSERT INTO rows_local ${clickHouseRowsSql(m, k)}`);
    }
    await clickHouse(
      cluster.http[0],
      "CREATE TABLE rows_all AS rows_local ENGINE = Distributed(two_shards, default, rows_local, rand())",
    );
    const count = (await clickHouse(cluster.http[0], "SELECT count() FROM rows_all")).trim();
    console.log(`  rows in the Distributed table: ${Number(count).toLocaleString("en")}`);
    const db = ["--db", cluster.url, "--sql", "SELECT * FROM rows_all", "--exposure", "exposure"];
    const a = fit([...db, "--model", MODEL]);
    const sa = JSON.parse(a.stdout).source;
    console.log(
      `  factor model, covariate patterns: ${a.seconds.toFixed(2)} s, peak ${mem(a)}; ${sa.rows_transferred} rows sent, ${sa.queries} queries`,
    );
    const b = fit([...db, "--model", `${MODEL} + outdoor_c`, "--intervals", "wald"]);
    const sb = JSON.parse(b.stdout).source;
    console.log(
      `  with outdoor_c, per-iteration sums (Wald limits, term tests): ${b.seconds.toFixed(2)} s, peak ${mem(b)}; ${sb.queries} queries`,
    );
  } finally {
    cluster.stop();
  }
}
