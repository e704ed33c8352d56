// npm run bench: end-to-end timings of the CLI on seeded files, side by side
// with the yardstick (pandas' C CSV reader + a numpy IRLS loop, bench/yardstick.py).
//   npm run bench                          100,000 rows (NB, clustered and GEE fits and profile limits against
//                                          the Poisson fit), then
//                                          1,000,000 rows (about 22 MB) against the yardstick; 3 alternating runs each
//   npm run bench -- --rows 100000 --reps 5
//   npm run bench -- --big                 also 10,000,000 rows (about 220 MB), one run per family, and the
//                                          Poisson fit against the same data collapsed outside tallyfit
//   npm run bench -- --smoke               10,000 rows, one run each, no yardstick, and the kernel at 5% size (used by the tests)
//   npm run bench -- --engines             push-down at scale (bench/engines.ts): 100,000,000 rows of Parquet through
//                                          DuckDB against DuckDB's own GROUP BY, 10,000,000 rows on two ClickHouse shards
//   npm run bench -- --kernel [--against DIR]  the IRLS kernel micro-benchmark alone (bench/kernel.ts), which the
//                                          default run also ends with
//   npm run bench -- --against DIR         also the Poisson and NB2 fits of the build in DIR (a built checkout of
//                                          another commit), alternating with this build's in the same runs, and its kernel:
//                                          before and after, side by side
// Wall time is measured around each process; peak resident memory comes from
// /usr/bin/time when present. Medians are printed with the ratios.
import { spawnSync } from "node:child_process";
import { existsSync, mkdirSync, statSync } from "node:fs";
import { dirname, join, resolve } from "node:path";
import { fileURLToPath } from "node:url";
import { writeBenchFile } from "./generate.js";
import { collapseBenchFile } from "./collapse.js";
import { runKernelBench } from "./kernel.js";
import { predictBench } from "./predict.js";
import { enginesBench } from "./engines.js";
import { PREFAULT_MIN_BYTES } from "../src/io/prefault.js";

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), "..", "..");
const BIN = join(ROOT, "bin", "tallyfit.js");
const DATA = join(ROOT, "bench", "data");
const YARDSTICK = join(ROOT, "bench", "yardstick.py");
const READ_ONCE = join(ROOT, "dist", "bench", "read-once.js");
/** Fresh processes that each time the byte scan and the loader. */
const READ_RUNS = 7;
const MODEL = "visits ~ region + agegrp + sex + insured + score";

function arg(name: string, dflt: number): number {
  const k = process.argv.indexOf(name);
  return k >= 0 ? Number(process.argv[k + 1]) : dflt;
}

/** The other build to time beside this one (--against DIR): its command-line entry. */
function againstBin(): string | null {
  const k = process.argv.indexOf("--against");
  if (k < 0) return null;
  const bin = join(resolve(process.argv[k + 1]), "bin", "tallyfit.js");
  if (!existsSync(bin)) throw new Error(`--against ${process.argv[k + 1]}: no bin/tallyfit.js there`);
  return bin;
}
const AGAINST = againstBin();

interface Timing {
  seconds: number;
  rssMB: number | null;
  stdout: string;
}

function run(cmd: string, args: string[]): Timing {
  const useTime = existsSync("/usr/bin/time");
  const t0 = process.hrtime.bigint();
  const r = useTime
    ? spawnSync("/usr/bin/time", ["-f", "%M", cmd, ...args], { encoding: "utf8", maxBuffer: 1 << 28 })
    : spawnSync(cmd, args, { encoding: "utf8", maxBuffer: 1 << 28 });
  const seconds = Number(process.hrtime.bigint() - t0) / 1e9;
  if (r.status !== 0) throw new Error(`${cmd} ${args.join(" ")} exited ${r.status}: ${r.stderr}`);
  const kb = useTime ? Number(r.stderr.trim().split("\n").pop()) : NaN;
  return { seconds, rssMB: Number.isFinite(kb) ? kb / 1024 : null, stdout: r.stdout };
}

const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];

/** Debian's python3 (with python3-numpy and python3-pandas) when present, else whatever python3 is on the PATH. */
function yardstickPython(): string | null {
  for (const py of ["/usr/bin/python3", "python3"]) {
    const r = spawnSync(py, ["-c", "import numpy, pandas"], { encoding: "utf8" });
    if (r.status === 0) return py;
  }
  return null;
}
let PYTHON = "python3";

async function bench(rows: number, reps: number, withYardstick: boolean): Promise<void> {
  mkdirSync(DATA, { recursive: true });
  const file = join(DATA, `bench_${rows}.csv`);
  if (!existsSync(file)) await writeBenchFile(file, rows, 1);
  const mb = statSync(file).size / 1e6;
  console.log(
    `\n${rows.toLocaleString("en")} rows, ${mb.toFixed(1)} MB (${file}); ${reps} alternating run${reps === 1 ? "" : "s"} each, medians`,
  );
  const base = ["fit", file, "--model", MODEL, "--exposure", "exposure", "--format", "json", "--quiet"];
  const cases: [string, string, string[]][] = [
    ["tallyfit poisson (Wald)", process.execPath, [BIN, ...base, "--intervals", "wald"]],
    ["tallyfit negbin (Wald)", process.execPath, [BIN, ...base, "--family", "negbin", "--intervals", "wald"]],
  ];
  if (AGAINST)
    cases.push(
      ["other build poisson (Wald)", process.execPath, [AGAINST, ...base, "--intervals", "wald"]],
      ["other build negbin (Wald)", process.execPath, [AGAINST, ...base, "--family", "negbin", "--intervals", "wald"]],
    );
  if (rows <= 100000)
    cases.push(
      // Clustered counts: the same fits with cluster-robust errors (20 region clusters), two-way, and GEE.
      [
        "tallyfit poisson --cluster region",
        process.execPath,
        [BIN, ...base, "--intervals", "wald", "--cluster", "region"],
      ],
      [
        "tallyfit negbin --cluster region",
        process.execPath,
        [BIN, ...base, "--family", "negbin", "--intervals", "wald", "--cluster", "region"],
      ],
      [
        "tallyfit poisson, two-way region × agegrp",
        process.execPath,
        [BIN, ...base, "--intervals", "wald", "--cluster", "region", "--cluster", "agegrp"],
      ],
      [
        "tallyfit poisson --gee exchangeable",
        process.execPath,
        [BIN, ...base, "--intervals", "wald", "--cluster", "region", "--gee", "exchangeable"],
      ],
    );
  if (rows <= 100000)
    cases.push([
      "tallyfit poisson, profiles of 30 coefficients",
      process.execPath,
      [
        BIN,
        "fit",
        file,
        "--model",
        `${MODEL} + sex:insured + sex:score`,
        "--exposure",
        "exposure",
        "--format",
        "json",
        "--quiet",
        "--intervals",
        "both",
      ],
    ]);
  if (withYardstick) cases.unshift(["yardstick pandas+numpy poisson", PYTHON, [YARDSTICK, file]]);
  const results = new Map<string, Timing[]>();
  for (let r = 0; r < reps; r++)
    for (const [name, cmd, args] of cases) results.set(name, [...(results.get(name) ?? []), run(cmd, args)]);
  const med = (name: string) => median(results.get(name)!.map((t) => t.seconds));
  const rss = (name: string) => {
    const t = results.get(name)!;
    return t[0].rssMB === null ? null : median(t.map((x) => x.rssMB!));
  };
  const ref = withYardstick ? "yardstick pandas+numpy poisson" : "tallyfit poisson (Wald)";
  for (const [name] of cases) {
    const sec = med(name),
      m = rss(name);
    console.log(
      `  ${name.padEnd(44)} ${sec.toFixed(2).padStart(7)} s  ${(rows / sec / 1e3).toFixed(0).padStart(6)}k rows/s  ${(mb / sec).toFixed(1).padStart(6)} MB/s  ` +
        `${m === null ? "" : `${m.toFixed(0).padStart(6)} MB peak`}   time ×${(sec / med(ref)).toFixed(2)}${m !== null && rss(ref) !== null ? `, memory ×${(m / rss(ref)!).toFixed(2)}` : ""} of ${withYardstick ? "the yardstick" : "Poisson"}`,
    );
  }
  if (withYardstick) {
    // Both programs must agree on the fit they time.
    const y = JSON.parse(results.get("yardstick pandas+numpy poisson")![0].stdout);
    const t = JSON.parse(results.get("tallyfit poisson (Wald)")![0].stdout);
    console.log(
      `  deviance: tallyfit ${t.deviance.toFixed(4)}, yardstick ${y.deviance.toFixed(4)} (relative difference ${(Math.abs(t.deviance - y.deviance) / y.deviance).toExponential(1)})`,
    );
  }
  // Reading: the byte scan and the loader in each of READ_RUNS fresh processes (bench/read-once.ts), medians.
  const reads = Array.from({ length: READ_RUNS }, () => JSON.parse(run(process.execPath, [READ_ONCE, file]).stdout));
  const scan = median(reads.map((r) => r.scan)),
    load = median(reads.map((r) => r.load));
  const ratios = reads.map((r) => r.load / r.scan).sort((a, b) => a - b);
  console.log(
    `  loader alone (${READ_RUNS} fresh processes${statSync(file).size >= PREFAULT_MIN_BYTES ? ", pages touched ahead" : ""}): ${load.toFixed(3)} s, ${(rows / load / 1e6).toFixed(2)}M rows/s, ${(mb / load).toFixed(0)} MB/s`,
  );
  console.log(
    `  byte scan (read + count newlines): ${scan.toFixed(3)} s, ${(mb / scan).toFixed(0)} MB/s, the floor for any CSV reader here; the loader is ×${(load / scan).toFixed(1)} of it (×${ratios[0].toFixed(1)}–${ratios[ratios.length - 1].toFixed(1)} by process)`,
  );
}

/**
 * 10,000,000 rows: one timed run per family (peak memory against the 1.5 GB
 * aim), then the Poisson fit compared with a fit of the same data collapsed
 * by covariate pattern outside tallyfit (bench/collapse.ts), both converged
 * to a tight tolerance.
 */
async function big(): Promise<void> {
  mkdirSync(DATA, { recursive: true });
  const rows = 10000000;
  const file = join(DATA, `bench_${rows}.csv`);
  if (!existsSync(file)) await writeBenchFile(file, rows, 1);
  const mb = statSync(file).size / 1e6;
  console.log(`\n${rows.toLocaleString("en")} rows, ${mb.toFixed(1)} MB (${file}); one run each`);
  const base = [
    "fit",
    file,
    "--model",
    MODEL,
    "--exposure",
    "exposure",
    "--format",
    "json",
    "--quiet",
    "--intervals",
    "wald",
  ];
  const builds: [string, string][] = [
    ["tallyfit", BIN],
    ...(AGAINST ? [["other build", AGAINST] as [string, string]] : []),
  ];
  for (const family of ["poisson", "negbin"])
    for (const [who, bin] of builds) {
      const t = run(process.execPath, [bin, ...base, "--family", family]);
      const out = JSON.parse(t.stdout);
      const merged = out.merged_patterns
        ? `IRLS over ${out.merged_patterns.patterns.toLocaleString("en")} patterns`
        : "IRLS over the rows";
      console.log(
        `  ${who} ${family.padEnd(8)} (Wald) ${t.seconds.toFixed(1).padStart(6)} s  ${(rows / t.seconds / 1e3).toFixed(0).padStart(5)}k rows/s  ${(mb / t.seconds).toFixed(1).padStart(5)} MB/s  ` +
          `${t.rssMB === null ? "" : `${t.rssMB.toFixed(0)} MB peak (${t.rssMB < 1536 ? "under" : "OVER"} 1.5 GB)`}  ${merged}`,
      );
    }
  const collapsed = join(DATA, `bench_${rows}_collapsed.csv`);
  const c = await collapseBenchFile(file, collapsed);
  const tight = ["--tolerance", "1e-13", "--max-iter", "100"];
  const full = JSON.parse(run(process.execPath, [BIN, ...base, ...tight]).stdout);
  const small = JSON.parse(
    run(process.execPath, [
      BIN,
      "fit",
      collapsed,
      "--model",
      MODEL,
      "--exposure",
      "exposure",
      "--format",
      "json",
      "--quiet",
      "--intervals",
      "wald",
      "--merge-patterns",
      "never",
      ...tight,
    ]).stdout,
  );
  let est = 0,
    se = 0;
  full.coefficients.forEach((x: { term: string; estimate: number; std_error: number }, k: number) => {
    const y = small.coefficients[k];
    if (y.term !== x.term) throw new Error(`term order differs: ${x.term} vs ${y.term}`);
    est = Math.max(est, Math.abs(x.estimate - y.estimate) / Math.abs(y.estimate));
    se = Math.max(se, Math.abs(x.std_error - y.std_error) / y.std_error);
  });
  console.log(
    `  collapsed outside tallyfit: ${c.rows.toLocaleString("en")} rows → ${c.patterns.toLocaleString("en")} patterns (${collapsed})`,
  );
  console.log(
    `  Poisson, every row vs the collapsed file: estimates agree to ${est.toExponential(1)}, standard errors to ${se.toExponential(1)} (largest relative difference)`,
  );
}

async function main(): Promise<void> {
  // The kernel micro-benchmark alone (see bench/kernel.ts); --against DIR adds another build's kernel.
  if (process.argv.includes("--kernel")) return runKernelBench(process.argv.slice(2));
  if (process.argv.includes("--engines")) return enginesBench(run, BIN, DATA);
  if (process.argv.includes("--smoke")) {
    await bench(10000, 1, false);
    await predictBench(run, BIN, DATA, MODEL, 1);
    return runKernelBench(["--smoke"]);
  }
  const py = yardstickPython();
  const withYardstick = py !== null;
  if (py) PYTHON = py;
  if (!withYardstick)
    console.log(
      "python3 with numpy and pandas not found: the yardstick is skipped (on Debian: apt-get install python3-numpy python3-pandas)",
    );
  // 100,000 rows: negative binomial and profile limits against the Poisson fit; 1,000,000 rows: against the yardstick.
  if (!process.argv.includes("--rows")) await bench(100000, arg("--reps", 3), false);
  await bench(arg("--rows", 1000000), arg("--reps", 3), withYardstick);
  await predictBench(run, BIN, DATA, MODEL, arg("--reps", 3));
  console.log("");
  await runKernelBench(AGAINST ? ["--against", process.argv[process.argv.indexOf("--against") + 1]] : []);
  if (process.argv.includes("--big")) await big();
}

main().catch((e) => {
  console.error(e);
  process.exitCode = 1;
});
