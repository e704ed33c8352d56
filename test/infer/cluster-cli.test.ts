// --cluster on the command line (part of clustered counts): standard errors,
// t on G − 1 df, Wald F term tests and the JSON fields from the cluster-robust
// covariance, matched to the numpy computation (cluster_runner.py); profile
// limits refused with the reason; the model file carries the covariance used.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, readFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { FIXTURES, assertRel, runCli } from "../helpers.js";

const ref = JSON.parse(readFileSync(join(FIXTURES, "scipy", "cluster_expected.json"), "utf8"));
const DATA = join(FIXTURES, "scipy", ref.data);
const ARGS = ["fit", DATA, "--model", ref.model, "--exposure", ref.exposure, "--tolerance", "1e-13"];

test("fit --cluster clinic: CR1 standard errors (numpy, 1e-8), t on G − 1 df, a Wald F term test and the JSON covariance fields", () => {
  const r = runCli([...ARGS, "--cluster", "clinic", "--format", "json"]);
  assert.equal(r.code, 0, r.stderr);
  const j = JSON.parse(r.stdout);
  assert.equal(j.standard_errors, "cluster");
  assert.deepEqual(j.covariance, { type: "cluster-CR1", clusters: [{ column: "clinic", count: 12 }], t_df: 11 });
  assert.equal(j.test_distribution, "t");
  j.coefficients.forEach((c: { std_error: number; profile: unknown }, k: number) => {
    assertRel(c.std_error, Math.sqrt(ref.one_way_clinic.covariance[k][k]), 1e-8, `SE ${k}`);
    assert.equal(c.profile, null, "no profile limits under clustering");
  });
  const x = j.term_tests[0];
  assert.equal(x.test, "Wald F");
  assertRel(x.statistic, (j.coefficients[1].estimate / j.coefficients[1].std_error) ** 2, 1e-10, "F = t² for one df");
  assert.ok(j.warnings.some((w: string) => /only 12 clusters of 'clinic'/.test(w)));
});

test("two-way --cluster clinic --cluster week matches numpy; profile limits and --robust are refused with the reason", () => {
  const r = runCli([...ARGS, "--cluster", "clinic", "--cluster", "week", "--format", "json"]);
  assert.equal(r.code, 0, r.stderr);
  const j = JSON.parse(r.stdout);
  assert.equal(j.covariance.type, "two-way-cluster-CR1");
  assert.equal(j.covariance.t_df, 11, "G − 1 for the smaller clustering");
  j.coefficients.forEach((c: { std_error: number }, k: number) =>
    assertRel(c.std_error, Math.sqrt(ref.two_way.covariance[k][k]), 1e-8, `two-way SE ${k}`),
  );
  const p = runCli([...ARGS, "--cluster", "clinic", "--intervals", "profile"]);
  assert.equal(p.code, 2);
  assert.match(p.stderr, /with --cluster only Wald limits .* treats every row as independent/);
  assert.equal(runCli([...ARGS, "--cluster", "clinic", "--robust"]).code, 2);
});

test("the model file saved with --cluster carries the cluster-robust covariance, which predict draws from", () => {
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-cluster-"));
  const model = join(dir, "m.json");
  assert.equal(runCli([...ARGS, "--cluster", "clinic", "--save-model", model, "--quiet"]).code, 0);
  const m = JSON.parse(readFileSync(model, "utf8"));
  assert.equal(m.covariance.type, "cluster-CR1");
  assert.deepEqual(m.covariance.clusters, [{ column: "clinic", count: 12 }]);
  assertRel(m.covariance.matrix[1][1], ref.one_way_clinic.covariance[1][1], 1e-8, "saved variance of x");
  const pr = runCli(["predict", "--model-file", model, DATA, "--format", "json", "--draws", "200", "--quiet"]);
  assert.equal(pr.code, 0, pr.stderr);
});
