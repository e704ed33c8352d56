// Prediction in a level that had no events in the fitted data: the level's
// upper profile limit (saved in the model file) stands in for its rate, so a
// count the limit makes plausible is never given P = 0 or flagged, and the
// output says which limit was used.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { ROOT, assertRel, runCli } from "../helpers.js";

const dir = mkdtempSync(join(tmpdir(), "tallyfit-noevents-"));
const lines = readFileSync(join(ROOT, "examples", "ward_falls.csv"), "utf8").split("\n");
const train = join(dir, "train.csv");
writeFileSync(train, `${lines.slice(0, 16).join("\n")}\n`);
const fitArgs = ["fit", train, "--model", "falls ~ ward", "--exposure", "bed_days", "--ref", "ward=general_medicine"];

test("the model file keeps the upper profile limit of a no-events level; predict uses it and says so", () => {
  const model = join(dir, "m.json");
  const fit = runCli([...fitArgs, "--format", "json", "--save-model", model]);
  assert.equal(fit.code, 0, fit.stderr);
  const upper = JSON.parse(fit.stdout).coefficients.find((c: { term: string }) => c.term === "ward=day_unit")
    .profile[1];
  const saved = JSON.parse(readFileSync(model, "utf8")).coefficients.find(
    (c: { term: string }) => c.term === "ward=day_unit",
  );
  assertRel(Math.exp(saved.upper_limit), upper, 1e-12, "saved limit = the fit's profile upper limit");
  const fresh = join(dir, "new.csv");
  writeFileSync(
    fresh,
    `${lines[0]}\n2026-01,day_unit,300,1.0,1\n2026-01,day_unit,300,1.0,0\n2026-01,rehab,300,1.0,2\n`,
  );
  const r = runCli(["predict", "--model-file", model, fresh, "--format", "json"]);
  assert.equal(r.code, 0, r.stderr);
  const out = JSON.parse(r.stdout);
  const [one, zero, rehab] = out.rows;
  assert.ok(one.upper_tail_p > 0.05, `one fall in 300 bed-days is plausible (P = ${one.upper_tail_p})`);
  assert.equal(one.flagged, false);
  assert.equal(one.expected, 0, "the estimate itself is a rate of 0");
  assert.ok(one.mean_ci[1] > 0, "the mean interval reaches up to the limit");
  assert.equal(one.prediction_interval[0], 0);
  assert.match(one.note, /ward=day_unit had no events .* upper 0\.95 profile limit \(rate ratio 2\.01\d\)/);
  assert.equal(zero.upper_tail_p, 1);
  assert.equal(rehab.note, null);
  const text = runCli(["predict", "--model-file", model, fresh, "--format", "text"]).stdout;
  assert.match(text.replace(/\s+/g, " "), /Rows 2, 3: ward=day_unit had no events in the fitted data/);
  const csv = runCli(["predict", "--model-file", model, fresh]).stdout.split("\n");
  assert.match(csv[0], /,flagged,prediction_note$/);
  assert.match(csv[1], /upper 0\.95 profile limit/);
});

test("with --intervals wald the fit still computes the limit for the model file", () => {
  const model = join(dir, "w.json");
  assert.equal(runCli([...fitArgs, "--intervals", "wald", "--quiet", "--save-model", model]).code, 0);
  const saved = JSON.parse(readFileSync(model, "utf8")).coefficients.find(
    (c: { term: string }) => c.term === "ward=day_unit",
  );
  assert.ok(Number.isFinite(saved.upper_limit) && saved.upper_limit > -5 && saved.upper_limit < 3);
});

test("predict on two threads gives byte-identical output to one thread (JSON and CSV)", () => {
  const args = ["predict", "--model-file", join(ROOT, "test/fixtures/golden/model-negbin.json")];
  const file = join(ROOT, "examples/clinic_visits_week49.csv");
  for (const format of ["json", "csv"]) {
    const one = runCli([...args, file, "--format", format, "--quiet"], undefined, { TALLYFIT_WORKERS: "0" });
    const two = runCli([...args, file, "--format", format, "--quiet"], undefined, { TALLYFIT_WORKERS: "1" });
    assert.equal(one.code, 0, one.stderr);
    assert.equal(two.stdout, one.stdout, format);
  }
});
