// Labels that say what the numbers are: rates without an intercept, t for the
// quasi-Poisson, sandwich-based term tests and dispersion wording with
// --robust, and a failed profile side that is never printed as ∞.
import { test } from "node:test";
import assert from "node:assert/strict";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { analyzeFit } from "../../src/analysis/fit.js";
import { summarizeFit } from "../../src/infer/summary.js";
import { renderFitText } from "../../src/report/fit-text.js";
import { makeStyle } from "../../src/report/style.js";
import { FIXTURES, assertRel, fitCsv, rng, runCli, simulateRates } from "../helpers.js";

const WARDS = ["examples/ward_falls.csv", "--model", "falls ~ ward + staffing_ratio", "--exposure", "bed_days"];

test("--no-intercept: a factor's levels are rates per unit of exposure with no reference, in text and JSON", () => {
  const text = runCli(["fit", ...WARDS, "--no-intercept"]).stdout;
  assert.match(
    text,
    /Rates per unit of bed_days with 95% intervals \(no intercept: each level is a rate, not a ratio\)/,
  );
  assert.match(text, /term +rate +Wald 95%/);
  assert.doesNotMatch(text, /reference: ward/);
  const json = JSON.parse(runCli(["fit", ...WARDS, "--no-intercept", "--format", "json"]).stdout);
  const gm = json.coefficients.find((c: { term: string }) => c.term === "ward=general_medicine");
  assert.equal(gm.measure, "rate");
  assert.equal(gm.rate_ratio, null);
  assertRel(gm.rate, Math.exp(gm.estimate), 1e-12, "rate = exp(estimate)");
  assert.equal(gm.levels[0].reference, null);
  const sr = json.coefficients.find((c: { term: string }) => c.term === "staffing_ratio");
  assert.equal(sr.measure, "rate_ratio");
  // With an intercept, the same levels are ratios against the reference.
  const withIntercept = JSON.parse(
    runCli(["fit", ...WARDS, "--format", "json", "--ref", "ward=general_medicine"]).stdout,
  );
  const rehab = withIntercept.coefficients.find((c: { term: string }) => c.term === "ward=rehab");
  assert.equal(rehab.measure, "rate_ratio");
  assert.equal(rehab.levels[0].reference, "general_medicine");
});

test("quasi-Poisson: the coefficient table's statistic column says t, as the test is Student's t", () => {
  const args = ["fit", "examples/clinic_visits.csv", "--model", "visits ~ clinic", "--exposure", "open_hours"];
  const text = runCli([...args, "--family", "quasipoisson", "--intervals", "wald"]).stdout;
  assert.match(text, /term +log rate ratio +SE +t +p-value/);
  assert.match(text, /t and p against Student's t on [\d,]+ df/);
  const json = JSON.parse(
    runCli([...args, "--family", "quasipoisson", "--intervals", "wald", "--format", "json"]).stdout,
  );
  assert.equal(json.test_distribution, "t");
  const poisson = runCli([...args, "--intervals", "wald"]).stdout;
  assert.match(poisson, /term +log rate ratio +SE +z +p-value/);
});

test("--robust: term tests are Wald tests with the sandwich (matching scipy's HC0 for a one-column term) and the dispersion text says so", () => {
  const ref = JSON.parse(readFileSync(join(FIXTURES, "scipy", "expected.json"), "utf8")).sandwich_hc0;
  const data = join(FIXTURES, "scipy", ref.data);
  const args = ["fit", data, "--model", ref.model, "--exposure", ref.exposure, "--robust", "--intervals", "wald"];
  const json = JSON.parse(runCli([...args, "--format", "json"]).stdout);
  const x = json.coefficients.find((c: { term: string }) => c.term === "x");
  const tx = json.term_tests.find((t: { term: string }) => t.term === "x");
  assert.equal(tx.test, "Wald chi-square");
  // The scipy runner's sandwich (direct matrix products at the scipy optimum): W = (b / se)².
  assertRel(tx.statistic, (x.estimate / ref.robust_std_error.x) ** 2, 1e-6, "Wald statistic of x");
  assert.equal(json.term_tests.find((t: { term: string }) => t.term === "A").df, 2);
  const text = runCli(args).stdout;
  assert.match(text, /Dropping each term \(Wald test with the sandwich covariance, other terms kept\)/);
  const over = runCli([
    "fit",
    "examples/clinic_visits.csv",
    "--model",
    "visits ~ clinic",
    "--exposure",
    "open_hours",
    "--robust",
  ]);
  assert.match(over.stdout.replace(/\s+/g, " "), /sandwich estimates, which allow for that/);
  assert.doesNotMatch(over.stdout.replace(/\s+/g, " "), /the standard errors and p-values above are too small/);
});

test("a profile side that could not be computed is 'failed' in JSON and n/a in the text, never ∞", () => {
  const { design } = fitCsv(simulateRates(rng(3), 200, 0), "y ~ g + x", { exposure: "e" });
  const { countFit } = analyzeFit(design, { family: "poisson", level: 0.95, intervals: "wald" });
  const profiles = new Map([
    [
      1,
      {
        lower: { value: -0.5, open: false },
        upper: { value: null, open: false, reason: "the constrained fit failed" },
        evaluations: 3,
      },
    ],
    [
      2,
      { lower: { value: -0.4, open: false }, upper: { value: null, open: true, reason: "no bound" }, evaluations: 3 },
    ],
  ]);
  const s = summarizeFit(design, countFit, { level: 0.95, profiles });
  assert.deepEqual(s.coefficients[1].profile_status, { lower: "limit", upper: "failed" });
  assert.deepEqual(s.coefficients[2].profile_status, { lower: "limit", upper: "open" });
  const text = renderFitText(s, { style: makeStyle(false), width: 120, intervals: "both" });
  const line1 = text.split("\n").find((l) => l.includes(s.coefficients[1].term))!;
  const line2 = text.split("\n").find((l) => l.includes(s.coefficients[2].term))!;
  assert.match(line1, /0\.6065 – n\/a/);
  assert.match(line2, /– ∞/);
  assert.match(text, /upper profile limit is not available: the constrained fit failed/);
});
