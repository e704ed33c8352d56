// check --family negbin|quasipoisson (weekly series: the model in use), by
// seeded simulation: on NB2 data the tests of the NB2 model flag at their
// nominal 5% or less (binomial 99.9% limits over 300 data sets); the quasi-Poisson
// check sees a variance that grows with the square of the mean; the NB2
// check sees structural zeros; the exit code follows the flags.
import { test } from "node:test";
import assert from "node:assert/strict";
import { analyzeCheck } from "../../src/analysis/check.js";
import { buildDesign } from "../../src/design/design.js";
import { parseFormula } from "../../src/formula/formula.js";
import { parseTable } from "../../src/io/csv.js";
import { binomialLimits, rng, runCli, simulateRates } from "../helpers.js";

function check(csv: string, family: "negbin" | "quasipoisson") {
  const design = buildDesign(parseTable(csv, { source: "sim.csv" }), parseFormula("y ~ g + x"), { exposure: "e" });
  return analyzeCheck(design, { testLevel: 0.05, family });
}

test("on NB2 data (alpha 0.3, n = 400) the tests of the NB2 model flag at 5% or less of 300 seeded data sets", () => {
  const u = rng(4242);
  const runs = 300;
  const flags: Record<string, number> = { model_pearson: 0, variance_shape: 0, model_zeros: 0 };
  for (let r = 0; r < runs; r++) {
    const res = check(simulateRates(u, 400, 0.3, 3), "negbin");
    assert.equal(res.family_checked, "negbin");
    for (const t of res.tests) if (t.flagged) flags[t.name]++;
  }
  const [lo, hi] = binomialLimits(runs, 0.05);
  console.log(`# flags of ${runs}: ${JSON.stringify(flags)}`);
  // The shape and zero tests flag at their nominal rate; the Pearson test, with alpha fitted to these very
  // residuals, is conservative (about 1% here): it never raises more false alarms than nominal.
  for (const k of ["variance_shape", "model_zeros"])
    assert.ok(flags[k] >= lo && flags[k] <= hi, `${k}: ${flags[k]} of ${runs}, limits ${lo}–${hi}`);
  assert.ok(flags.model_pearson <= hi, `model_pearson: ${flags.model_pearson} of ${runs}, at most ${hi}`);
});

test("the quasi-Poisson check flags NB2-shaped variance; the NB2 check flags structural zeros; exit codes 4 and 0", () => {
  const u = rng(99);
  let shape = 0;
  for (let r = 0; r < 20; r++)
    if (check(simulateRates(u, 800, 0.5, 8), "quasipoisson").tests.find((t) => t.name === "variance_shape")!.flagged)
      shape++;
  assert.ok(shape >= 18, `variance shape flagged ${shape} of 20`);
  // A quarter of the rows cannot have events (closed days recorded as zero).
  const lines = simulateRates(rng(5), 600, 0.2, 3).trim().split("\n");
  const zeroed = [lines[0], ...lines.slice(1).map((l, i) => (i % 4 === 0 ? l.replace(/,\d+$/, ",0") : l))].join("\n");
  const z = check(`${zeroed}\n`, "negbin");
  assert.ok(z.tests.find((t) => t.name === "model_zeros")!.flagged);
  assert.equal(z.verdict.code, "excess_zeros");
  const nb = runCli(
    ["check", "-", "--model", "y ~ g + x", "--exposure", "e", "--family", "negbin", "--format", "json"],
    `${zeroed}\n`,
  );
  assert.equal(nb.code, 4);
  const clean = runCli(
    ["check", "-", "--model", "y ~ g + x", "--exposure", "e", "--family", "negbin"],
    simulateRates(rng(6), 500, 0.3, 3),
  );
  assert.equal(clean.code, 0, clean.stdout);
  assert.match(clean.stdout, /Adequacy check of the negative-binomial model/);
});

test("check --family zinb|zip with --zero-terms on the bundled ward reports: the ZINB it came from passes, the ZIP's variance does not", () => {
  const base = [
    "check",
    "examples/ward_reports.csv",
    "--model",
    "falls ~ ward_type",
    "--exposure",
    "bed_days",
    "--zero-terms",
    "small_unit",
    "--format",
    "json",
    "--quiet",
  ];
  const zinb = runCli([...base, "--family", "zinb"]);
  assert.equal(zinb.code, 0, zinb.stdout);
  const j = JSON.parse(zinb.stdout).check;
  assert.equal(j.family_checked, "zinb");
  assert.equal(j.verdict.code, "model_adequate");
  const zip = runCli([...base, "--family", "zip"]);
  assert.equal(zip.code, 4);
  const k = JSON.parse(zip.stdout).check;
  assert.equal(k.verdict.code, "variance_misfit");
  assert.match(k.verdict.next_step, /refit with --family zinb/);
  assert.ok(k.tests.find((t: { name: string }) => t.name === "model_pearson").flagged);
});
