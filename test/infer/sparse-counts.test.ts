// A four-arm study in which one arm had no events (test/fixtures/scipy/sparse_arms.csv):
// the term test of the factor, compare, and the NB2 profile limit of the empty arm,
// against scipy.optimize on the Poisson and NB2 log-likelihoods (sparse_runner.py).
import { test } from "node:test";
import assert from "node:assert/strict";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { FIXTURES, assertRel, runCli } from "../helpers.js";

const ref = JSON.parse(readFileSync(join(FIXTURES, "scipy", "sparse_expected.json"), "utf8"));
const DATA = join(FIXTURES, "scipy", ref.data);
const base = [DATA, "--model", ref.model, "--exposure", ref.exposure, "--format", "json"];

function fitJson(family: string) {
  const r = runCli(["fit", ...base, "--family", family]);
  assert.equal(r.code, 0, r.stderr);
  return JSON.parse(r.stdout);
}

function compareLr(family: string): number {
  const args = ["compare", DATA, "--exposure", ref.exposure, "--model", "events ~ 1", "--model", ref.model];
  const out = runCli([...args, "--family", family, "--format", "json"]);
  assert.equal(out.code, 0, out.stderr);
  return JSON.parse(out.stdout).nested[0].statistic;
}

for (const family of ["poisson", "negbin"] as const) {
  test(`${family}: the term test of a factor with a no-events level equals the LR between the two fitted models and scipy.optimize (1e-6)`, () => {
    const fit = fitJson(family);
    const arm = fit.term_tests.find((t: { term: string }) => t.term === "arm");
    assert.equal(arm.df, 3, "the no-events level is part of the term");
    assertRel(arm.statistic, ref[family].lr_arm, 1e-6, "term test against scipy");
    assertRel(compareLr(family), ref[family].lr_arm, 1e-6, "compare against scipy");
    assertRel(arm.statistic, compareLr(family), 1e-9, "term test against compare");
  });
}

test("negbin: the profile upper limit of a no-events level, alpha re-estimated, matches scipy (brentq on the constrained maxima) to 1e-4", () => {
  const fit = fitJson("negbin");
  assertRel(fit.negbin.alpha, ref.negbin.alpha, 1e-5, "alpha");
  const d = fit.coefficients.find((c: { term: string }) => c.term === "arm=d");
  assert.equal(d.status, "no_events");
  assert.equal(d.profile[0], 0, "an open lower side is 0 on the rate-ratio scale");
  assertRel(d.profile[1], ref.negbin.profile_upper_arm_d, 1e-4, "profile upper limit");
});
