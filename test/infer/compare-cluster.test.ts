// compare --cluster (clustered counts): nested pairs are tested by a Wald F
// from the larger model's cluster-robust covariance, checked against the
// numpy CR1 covariance of cluster_runner.py (F = b²/V for one extra column,
// on (1, G − 1) df); the report says that AIC and BIC assume independence.
import { test } from "node:test";
import assert from "node:assert/strict";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { fUpperTail } from "../../src/math/distributions.js";
import { FIXTURES, assertRel, runCli } from "../helpers.js";

const ref = JSON.parse(readFileSync(join(FIXTURES, "scipy", "cluster_expected.json"), "utf8"));
const DATA = join(FIXTURES, "scipy", ref.data);
const ARGS = [
  "compare",
  DATA,
  "--exposure",
  ref.exposure,
  "--model",
  "visits ~ 1",
  "--model",
  ref.model,
  "--tolerance",
  "1e-13",
];

test("compare --cluster clinic: the nested pair's Wald F is b²/V from numpy's CR1 covariance, on (1, G − 1) df", () => {
  const r = runCli([...ARGS, "--cluster", "clinic", "--format", "json"]);
  assert.equal(r.code, 0, r.stderr);
  const j = JSON.parse(r.stdout);
  const pair = j.nested[0];
  assert.equal(pair.test, "Wald F");
  assert.equal(pair.df, 1);
  const f = ref.estimate[1] ** 2 / ref.one_way_clinic.covariance[1][1];
  assertRel(pair.statistic, f, 1e-7, "F");
  assertRel(pair.p_value, fUpperTail(f, 1, ref.one_way_clinic.clusters - 1), 1e-6, "p");
  assert.deepEqual(j.covariance, { type: "cluster-CR1", clusters: [{ column: "clinic", count: 12 }], t_df: 11 });
  assert.ok(j.notes.some((n: string) => /AIC and BIC assume independent rows/.test(n)));
  // Without --cluster the same pair gets the likelihood-ratio test, which treats rows as independent.
  const plain = JSON.parse(runCli([...ARGS, "--format", "json"]).stdout);
  assert.equal(plain.nested[0].test, "LR chi-square");
  assert.ok(plain.nested[0].p_value < pair.p_value, "the row-independent test is the more confident one here");
});

test("compare --cluster: text report shows the clusters and the note; a third --cluster is refused", () => {
  const r = runCli([...ARGS, "--cluster", "clinic", "--cluster", "week"]);
  assert.equal(r.code, 0, r.stderr);
  assert.match(r.stdout, /clusters: 12 of clinic and 15 of week; Wald F on 11 denominator df/);
  assert.match(r.stdout, /AIC and BIC assume independent rows/);
  const bad = runCli([...ARGS, "--cluster", "clinic", "--cluster", "week", "--cluster", "x"]);
  assert.equal(bad.code, 2);
  assert.match(bad.stderr, /--cluster is given once/);
});
