// Trend and season as generated terms (weekly series): the Poisson fit with
// --date --trend --season 2 against scipy.optimize on the same terms built
// as defined (calendar_runner.py), to 1e-6; the seasonal peak and trough
// days, the peak-to-trough ratio and its delta-method interval against the
// runner's extremes of the fitted curve and its numerically differentiated
// standard error; and predict makes the same terms from the rows' dates.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, readFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { normalQuantile } from "../../src/math/distributions.js";
import { FIXTURES, assertRel, runCli } from "../helpers.js";

const ref = JSON.parse(readFileSync(join(FIXTURES, "scipy", "calendar_expected.json"), "utf8"));
const DATA = join(FIXTURES, "scipy", ref.data);
const ARGS = [
  "fit",
  DATA,
  "--model",
  ref.model,
  "--exposure",
  ref.exposure,
  "--date",
  ref.date,
  "--trend",
  "--season",
  String(ref.season),
  "--tolerance",
  "1e-13",
  "--intervals",
  "wald",
];

test("--trend --season 2: estimates and SEs match scipy on the terms built as defined (1e-6); seasonality as the runner finds it", () => {
  const r = runCli([...ARGS, "--format", "json"]);
  assert.equal(r.code, 0, r.stderr);
  const j = JSON.parse(r.stdout);
  assert.equal(j.model, "visits ~ 1 + trend + season_sin1 + season_cos1 + season_sin2 + season_cos2");
  for (const c of j.coefficients) {
    assertRel(c.estimate, ref.coefficients[c.term], 1e-6, c.term);
    assertRel(c.std_error, ref.std_errors[c.term], 1e-5, `SE ${c.term}`);
  }
  const s = j.seasonality;
  assert.ok(Math.abs(s.peak_day - ref.peak_day) < 1e-4, `peak ${s.peak_day} vs ${ref.peak_day}`);
  assert.ok(Math.abs(s.trough_day - ref.trough_day) < 1e-4, `trough ${s.trough_day} vs ${ref.trough_day}`);
  assertRel(s.peak_to_trough, ref.peak_to_trough, 1e-6, "peak-to-trough");
  const z = normalQuantile(0.975);
  const lr = Math.log(ref.peak_to_trough);
  assertRel(s.peak_to_trough_ci[0], Math.exp(lr - z * ref.log_peak_to_trough_se), 1e-5, "lower");
  assertRel(s.peak_to_trough_ci[1], Math.exp(lr + z * ref.log_peak_to_trough_se), 1e-5, "upper");
  assert.equal(j.dates.first, new Date(ref.first_day * 86400000).toISOString().slice(0, 10));
  const text = runCli(ARGS).stdout;
  assert.match(text, /Seasonal pattern \(2 harmonic pairs a year\)/);
  assert.match(text, /peak-to-trough rate ratio\s+1\.80/);
});

test("predict makes the calendar terms from the new rows' dates: predicting the fitted rows gives the fitted means (scipy, 1e-6)", () => {
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-cal-"));
  const model = join(dir, "m.json");
  assert.equal(runCli([...ARGS, "--save-model", model, "--quiet"]).code, 0);
  const saved = JSON.parse(readFileSync(model, "utf8"));
  assert.equal(saved.calendar.column, "date");
  assert.equal(saved.calendar.season, 2);
  const pr = runCli(["predict", "--model-file", model, DATA, "--format", "json", "--draws", "100", "--quiet"]);
  assert.equal(pr.code, 0, pr.stderr);
  const rows = JSON.parse(pr.stdout).rows;
  const lines = readFileSync(DATA, "utf8").trim().split("\n").slice(1);
  const c = ref.coefficients;
  for (const k of [0, 17, lines.length - 1]) {
    const [date, hours] = lines[k].split(",");
    const d = Date.parse(`${date}T00:00:00Z`) / 86400000;
    const w = (m: number) => (2 * Math.PI * m * d) / 365.25;
    const eta =
      Math.log(+hours) +
      c.intercept +
      c.trend * ((d - ref.first_day) / 365.25) +
      c.season_sin1 * Math.sin(w(1)) +
      c.season_cos1 * Math.cos(w(1)) +
      c.season_sin2 * Math.sin(w(2)) +
      c.season_cos2 * Math.cos(w(2));
    assertRel(rows[k].expected, Math.exp(eta), 1e-6, `row ${k}`);
  }
});

test("--ratio-per and --baseline-at: a numeric term per K units and the baseline at chosen values, from the scipy coefficients", () => {
  const r = runCli([...ARGS, "--format", "json", "--ratio-per", "trend=2", "--baseline-at", "trend=1"]);
  assert.equal(r.code, 0, r.stderr);
  const j = JSON.parse(r.stdout);
  const trend = j.coefficients.find((c: { term: string }) => c.term === "trend");
  assert.equal(trend.per_units, 2);
  assertRel(trend.estimate, ref.coefficients.trend, 1e-6, "estimate stays per unit");
  assertRel(trend.rate_ratio, Math.exp(2 * ref.coefficients.trend), 1e-6, "rate ratio per 2 years");
  const z = normalQuantile(0.975);
  assertRel(
    trend.wald[1],
    Math.exp(2 * (ref.coefficients.trend + z * ref.std_errors.trend)),
    1e-5,
    "upper limit per 2 years",
  );
  // Baseline at trend = 1 and the season terms at their means over the rows used.
  const lines = readFileSync(DATA, "utf8").trim().split("\n").slice(1);
  const days = lines.map((l) => Date.parse(`${l.split(",")[0]}T00:00:00Z`) / 86400000);
  const mean = (f: (d: number) => number) => days.reduce((a, d) => a + f(d), 0) / days.length;
  const w = (m: number, d: number) => (2 * Math.PI * m * d) / 365.25;
  const c = ref.coefficients;
  const eta =
    c.intercept +
    c.trend * 1 +
    c.season_sin1 * mean((d) => Math.sin(w(1, d))) +
    c.season_cos1 * mean((d) => Math.cos(w(1, d))) +
    c.season_sin2 * mean((d) => Math.sin(w(2, d))) +
    c.season_cos2 * mean((d) => Math.cos(w(2, d)));
  assertRel(j.baseline.rate, Math.exp(eta), 1e-6, "baseline rate");
  assert.deepEqual(
    j.baseline.at.map((a: { column: string; source: string }) => [a.column, a.source]),
    [
      ["trend", "given"],
      ["season_sin1", "mean"],
      ["season_cos1", "mean"],
      ["season_sin2", "mean"],
      ["season_cos2", "mean"],
    ],
  );
  // At every numeric term = 0 the baseline is the intercept's rate, with its interval.
  const zero = ["trend", "season_sin1", "season_cos1", "season_sin2", "season_cos2"].flatMap((t) => [
    "--baseline-at",
    `${t}=0`,
  ]);
  const k = JSON.parse(runCli([...ARGS, "--format", "json", ...zero]).stdout);
  assertRel(k.baseline.rate, Math.exp(c.intercept), 1e-6, "at 0");
  assertRel(k.baseline.wald[0], k.coefficients[0].wald[0], 1e-12, "interval at 0");
});
