// npm run bench -- --kernel: micro-benchmark of the IRLS kernel's hot passes
// (eta, mu, deviance, X'WX and X'Wz, per iteration), on designs built in
// memory from seeded invented data, so that a change to the kernel shows its
// cost apart from reading, design building and inference.
//   npm run bench -- --kernel                       this build only
//   npm run bench -- --kernel --against DIR         also the kernel of the build in DIR (DIR/dist/src/...),
//                                                   alternating runs in one process, with the ratio
// Three cases: the Poisson and the NB2 (alpha held fixed) on the cell path
// (rows grouped by column pattern), and the Poisson on the row-by-row path
// (more column patterns than n/8).
import { existsSync } from "node:fs";
import { join, resolve } from "node:path";
import { pathToFileURL } from "node:url";
import { buildDesign, type Design } from "../src/design/design.js";
import { fitGlm } from "../src/fit/kernel/glm.js";
import { prepareFit } from "../src/fit/kernel/setup.js";
import { parseFormula } from "../src/formula/formula.js";
import { parseTable } from "../src/io/csv.js";
import { negbinDraw, uniformGenerator } from "../src/math/random.js";

type Kernel = (
  m: Design["matrix"],
  data: Design,
  options: { alpha?: number },
) => { iterations: number; deviance: number };

interface Case {
  name: string;
  design: Design;
  alpha: number;
}

function caseCsv(rows: number, levelsA: number, levelsB: number, seed: number, alpha: number): string {
  const u = uniformGenerator(seed);
  const lines = ["a,b,x,e,y"];
  for (let i = 0; i < rows; i++) {
    const a = Math.floor(u() * levelsA);
    const b = Math.floor(u() * levelsB);
    const x = Math.round(u() * 1000) / 100;
    const e = Math.round((0.5 + u() * 4) * 100) / 100;
    const mu = e * Math.exp(0.2 + 0.3 * Math.sin(a) + 0.2 * Math.cos(b) + 0.03 * x);
    lines.push(`a${a},b${b},${x},${e},${negbinDraw(u, mu, alpha)}`);
  }
  return `${lines.join("\n")}\n`;
}

function makeCase(name: string, rows: number, levelsA: number, levelsB: number, alpha: number): Case {
  const table = parseTable(caseCsv(rows, levelsA, levelsB, 7, alpha || 0.2), { source: `${name}.csv` });
  const design = buildDesign(table, parseFormula("y ~ a + b + x"), { exposure: "e" });
  return { name, design, alpha };
}

function timeOnce(kernel: Kernel, c: Case): { ms: number; iterations: number; deviance: number } {
  const t0 = process.hrtime.bigint();
  const r = kernel(c.design.matrix, c.design, { alpha: c.alpha });
  return { ms: Number(process.hrtime.bigint() - t0) / 1e6, iterations: r.iterations, deviance: r.deviance };
}

const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];

export async function runKernelBench(argv: string[]): Promise<void> {
  const k = argv.indexOf("--against");
  const reps = argv.includes("--smoke") ? 1 : 7;
  const scale = argv.includes("--smoke") ? 0.05 : 1;
  const kernels: { label: string; fit: Kernel }[] = [{ label: "this build", fit: fitGlm as unknown as Kernel }];
  if (k >= 0) {
    const dir = resolve(argv[k + 1]);
    const candidates = ["dist/src/fit/kernel/glm.js", "dist/src/fit/irls.js"].map((p) => join(dir, p));
    const file = candidates.find((p) => existsSync(p));
    if (!file) throw new Error(`--against ${dir}: no built kernel found (run its build first)`);
    const mod = (await import(pathToFileURL(file).href)) as { fitGlm: Kernel };
    kernels.push({ label: `${argv[k + 1]}`, fit: mod.fitGlm });
  }
  const cases = [
    makeCase("poisson, cells", Math.round(500_000 * scale), 20, 6, 0),
    makeCase("negbin (alpha 0.2), cells", Math.round(500_000 * scale), 20, 6, 0.2),
    // More column patterns than n/8: the row-by-row path (fewer levels at smoke size, where dense algebra would dominate).
    scale < 1
      ? makeCase("poisson, row by row", Math.round(200_000 * scale), 100, 30, 0)
      : makeCase("poisson, row by row", 200_000, 500, 100, 0),
  ];
  console.log(`IRLS kernel (fitGlm), median of ${reps} alternating runs, ms per fit and per iteration`);
  for (const c of cases) {
    const times = kernels.map(() => [] as number[]);
    const results = kernels.map(() => ({ iterations: 0, deviance: 0 }));
    for (let r = 0; r < reps + 1; r++)
      kernels.forEach((kern, j) => {
        const t = timeOnce(kern.fit, c);
        if (r > 0) times[j].push(t.ms); // the first run warms the JIT
        results[j] = t;
      });
    const base = median(times[0]);
    const path = prepareFit(c.design.matrix, c.design).parentCells ? "cell path" : "row-by-row path";
    console.log(`  ${c.name}: ${c.design.n.toLocaleString("en-US")} rows, ${c.design.matrix.p} columns, ${path}`);
    kernels.forEach((kern, j) => {
      const ms = median(times[j]);
      const per = ms / results[j].iterations;
      const ratio = j === 0 ? "" : `   this build ×${(base / ms).toFixed(2)} of it`;
      console.log(
        `    ${kern.label.padEnd(12)} ${ms.toFixed(1).padStart(8)} ms  ${results[j].iterations} iterations  ${per.toFixed(2).padStart(7)} ms/iteration  deviance ${results[j].deviance.toPrecision(12)}${ratio}`,
      );
    });
  }
}
