// Prediction against fitting: 1,000 rows of the seeded bench file, fitted as
// an NB2 (Wald and profile intervals, term tests, --save-model), then every
// row predicted under that model with the default 2,000 draws (intervals,
// tail probabilities, flags). Whole processes, alternating, medians; the
// target is predict ≤ 1.5× fit.
import { existsSync, mkdirSync, mkdtempSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { writeBenchFile } from "./generate.js";

interface Timed {
  seconds: number;
}

export async function predictBench(
  run: (cmd: string, args: string[]) => Timed,
  bin: string,
  dataDir: string,
  model: string,
  reps: number,
): Promise<void> {
  mkdirSync(dataDir, { recursive: true });
  const file = join(dataDir, "bench_1000.csv");
  if (!existsSync(file)) await writeBenchFile(file, 1000, 7);
  const saved = join(mkdtempSync(join(tmpdir(), "tallyfit-bench-")), "model.json");
  const fit = ["fit", file, "--model", model, "--exposure", "exposure", "--family", "negbin", "--format", "json"];
  const fitArgs = [bin, ...fit, "--quiet", "--save-model", saved];
  const predictArgs = [bin, "predict", "--model-file", saved, file, "--format", "json", "--quiet"];
  const tf: number[] = [],
    tp: number[] = [];
  for (let r = 0; r < reps; r++) {
    tf.push(run(process.execPath, fitArgs).seconds);
    tp.push(run(process.execPath, predictArgs).seconds);
  }
  const med = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];
  const f = med(tf),
    p = med(tp);
  console.log(`\n1,000 rows, negative binomial, ${reps} alternating run${reps === 1 ? "" : "s"}, medians`);
  console.log(`  tallyfit fit (intervals, term tests, --save-model)   ${f.toFixed(2)} s`);
  console.log(
    `  tallyfit predict (2,000 draws: intervals, tails, flags) ${p.toFixed(2)} s   predict/fit ×${(p / f).toFixed(2)} (target ≤ ×1.5)`,
  );
}
