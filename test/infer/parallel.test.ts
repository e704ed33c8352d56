// Term tests and profile limits shared with a worker thread (src/infer/parallel.ts)
// must give exactly what the same jobs give on one thread.
import { test } from "node:test";
import assert from "node:assert/strict";
import { analyzeFit, analyzeFitParallel } from "../../src/analysis/fit.js";
import { buildDesign } from "../../src/design/design.js";
import { parseTable } from "../../src/io/csv.js";
import { parseFormula } from "../../src/formula/formula.js";
import { inferencePlan, runJob, runJobs, wantWorker } from "../../src/infer/parallel.js";
import { profileContext } from "../../src/infer/intervals.js";
import { termTestContext } from "../../src/infer/terms.js";
import { fitCounts } from "../../src/fit/count-fit.js";
import { negbinDraw, rng, runCli } from "../helpers.js";
import { FitError } from "../../src/errors.js";

function wardsCsv(seed: number, n: number, alpha: number): string {
  const u = rng(seed);
  let csv = "ward,month,staff,beddays,falls\n";
  for (let i = 0; i < n; i++) {
    const ward = Math.floor(u() * 6),
      month = Math.floor(u() * 4),
      staff = Math.round((2 + u() * 6) * 10) / 10,
      bd = Math.round(200 + u() * 600);
    csv += `w${ward},m${month},${staff},${bd},${negbinDraw(u, (bd / 1000) * Math.exp(1 + 0.2 * ward - 0.1 * staff + 0.1 * month), alpha)}\n`;
  }
  return csv;
}

const designOf = (csv: string, model: string) =>
  buildDesign(parseTable(csv, { source: "wards.csv" }), parseFormula(model), { exposure: "beddays" });

test("jobs run on a worker thread give exactly the one-thread results (Poisson profiles and term tests, NB term tests)", async () => {
  for (const [family, alpha] of [
    ["poisson", 0],
    ["negbin", 0.4],
  ] as const) {
    const design = designOf(wardsCsv(5, 1500, alpha), "falls ~ ward + month + staff");
    const mf = fitCounts(design, { family });
    const plan = inferencePlan(profileContext(design, mf, 0.95), termTestContext(design, mf));
    assert.ok(plan.jobs.length >= 10);
    const one = plan.jobs.map((j) => runJob(plan, j));
    assert.deepEqual(await runJobs(plan, true), one, `${family}: shared`);
    assert.deepEqual(await runJobs(plan, true, true), one, `${family}: all on the worker`);
  }
});

test("analyzeFitParallel gives the same report as analyzeFit", async () => {
  const design = designOf(wardsCsv(6, 800, 0.3), "falls ~ ward * month + staff");
  const o = { family: "negbin" as const, level: 0.9, intervals: "both" as const };
  assert.deepEqual(await analyzeFitParallel(design, o).then((a) => a.summary), analyzeFit(design, o).summary);
});

test("a worker is used only for large designs, a second core, and TALLYFIT_WORKERS not 0", () => {
  const design = designOf(wardsCsv(7, 300, 0), "falls ~ ward + staff");
  const mf = fitCounts(design, { family: "poisson" });
  const plan = inferencePlan(null, termTestContext(design, mf));
  assert.equal(wantWorker(plan, {}), false, "300 rows");
  assert.equal(wantWorker(plan, { TALLYFIT_WORKERS: "1" }), true, "forced");
  assert.equal(wantWorker(plan, { TALLYFIT_WORKERS: "0" }), false, "turned off");
  assert.equal(wantWorker(inferencePlan(null, null), { TALLYFIT_WORKERS: "1" }), false, "no jobs");
});

test("CLI: the report is byte-identical with the worker forced on and off", () => {
  const csv = wardsCsv(8, 600, 0.5);
  const args = [
    "fit",
    "-",
    "--model",
    "falls ~ ward + month + staff",
    "--exposure",
    "beddays",
    "--family",
    "negbin",
    "--format",
    "json",
  ];
  const on = runCli(args, csv, { TALLYFIT_WORKERS: "1" }),
    off = runCli(args, csv, { TALLYFIT_WORKERS: "0" });
  assert.equal(on.code, 0, on.stderr);
  assert.equal(on.stdout, off.stdout);
});

test("a FitError in a job on the worker reaches the caller as the same FitError (exit code 3 in the CLI)", async () => {
  const design = designOf(wardsCsv(9, 300, 0), "falls ~ ward + staff");
  const mf = fitCounts(design, { family: "poisson" });
  const plan = inferencePlan(null, termTestContext(design, mf));
  // Offsets no fitted mean can survive: the refits overflow.
  plan.terms!.design = { ...plan.terms!.design, offset: new Float64Array(design.n).fill(1e308) };
  let here: unknown = null;
  try {
    runJob(plan, plan.jobs[0]);
  } catch (e) {
    here = e;
  }
  assert.ok(here instanceof FitError, "on this thread");
  await assert.rejects(
    runJobs(plan, true, true),
    (e: unknown) => e instanceof FitError && e.message === (here as FitError).message && e.exitCode === 3,
  );
});
