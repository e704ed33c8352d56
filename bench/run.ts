// npm run bench: end-to-end timings of the CLI on seeded files.
//   npm run bench                   100,000 rows: Poisson, negative binomial, profile limits
//   npm run bench -- --rows 200000 --reps 5
// Each case runs the built CLI as a user would and reports the median wall
// time and peak resident memory (from /usr/bin/time when present).
import { spawnSync } from "node:child_process";
import { existsSync, mkdirSync, statSync } from "node:fs";
import { dirname, join, resolve } from "node:path";
import { fileURLToPath } from "node:url";
import { writeBenchFile } from "./generate.js";

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), "..", "..");
const BIN = join(ROOT, "bin", "tallyfit.js");
const DATA = join(ROOT, "bench", "data");

function arg(name: string, dflt: number): number {
  const k = process.argv.indexOf(name);
  return k >= 0 ? Number(process.argv[k + 1]) : dflt;
}

interface Timing { seconds: number; rssMB: number | null }

function runOnce(args: string[]): Timing {
  const useTime = existsSync("/usr/bin/time");
  const cmd = useTime ? "/usr/bin/time" : process.execPath;
  const full = useTime ? ["-f", "%M", process.execPath, BIN, ...args] : [BIN, ...args];
  const t0 = process.hrtime.bigint();
  const r = spawnSync(cmd, full, { encoding: "utf8", maxBuffer: 1 << 28 });
  const seconds = Number(process.hrtime.bigint() - t0) / 1e9;
  if (r.status !== 0) throw new Error(`tallyfit ${args.join(" ")} exited ${r.status}: ${r.stderr}`);
  const kb = useTime ? Number(r.stderr.trim().split("\n").pop()) : NaN;
  return { seconds, rssMB: Number.isFinite(kb) ? kb / 1024 : null };
}

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)];
}

async function main(): Promise<void> {
  const rows = arg("--rows", 100000);
  const reps = arg("--reps", 3);
  mkdirSync(DATA, { recursive: true });
  const file = join(DATA, `bench_${rows}.csv`);
  if (!existsSync(file)) await writeBenchFile(file, rows, 1);
  const mb = statSync(file).size / 1e6;
  console.log(`bench file ${file}: ${rows.toLocaleString("en")} rows, ${mb.toFixed(1)} MB; ${reps} runs each, medians`);
  const model = "visits ~ region + agegrp + sex + insured + score";
  const base = ["fit", file, "--model", model, "--exposure", "exposure", "--format", "json", "--quiet"];
  const cases: [string, string[]][] = [
    ["poisson, Wald only", [...base, "--intervals", "wald"]],
    ["negbin, Wald only", [...base, "--family", "negbin", "--intervals", "wald"]],
    ["poisson, profile limits for 30 coefficients", ["fit", file, "--model", model + " + sex:insured + sex:score", "--exposure", "exposure", "--format", "json", "--quiet", "--intervals", "both"]],
  ];
  const results = new Map<string, Timing[]>();
  for (let r = 0; r < reps; r++)
    for (const [name, args] of cases) {
      const t = runOnce(args);
      results.set(name, [...(results.get(name) ?? []), t]);
    }
  const rowsOut: string[] = [];
  let poisson = NaN;
  for (const [name] of cases) {
    const ts = results.get(name)!;
    const sec = median(ts.map((t) => t.seconds));
    const rss = ts[0].rssMB === null ? null : median(ts.map((t) => t.rssMB!));
    if (name.startsWith("poisson, Wald")) poisson = sec;
    rowsOut.push(
      `${name.padEnd(46)} ${sec.toFixed(3).padStart(8)} s   ${(rows / sec / 1e3).toFixed(0).padStart(6)}k rows/s   ${(mb / sec).toFixed(1).padStart(6)} MB/s   ${rss === null ? "" : `${rss.toFixed(0)} MB peak RSS`}   ×${(sec / poisson).toFixed(2)} of Poisson`,
    );
  }
  for (const l of rowsOut) console.log(l);
}

main().catch((e) => {
  console.error(e);
  process.exitCode = 1;
});
