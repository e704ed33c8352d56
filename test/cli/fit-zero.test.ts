// fit --family zip|zinb|hurdle-poisson|hurdle-negbin --zero-terms (excess
// zeros) on the command line: the JSON's count part, zero part and alpha
// against scipy.optimize on the written-out likelihoods (zero_runner.py), the
// schema, the report's wording, and the options these families refuse.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, readFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { assertRel, FIXTURES, runCli, schemaValidator } from "../helpers.js";

const ref = JSON.parse(readFileSync(join(FIXTURES, "scipy", "zero_expected.json"), "utf8"));
const DATA = join(FIXTURES, "scipy", ref.data);
const ARGS = ["fit", DATA, "--model", ref.model, "--exposure", ref.exposure, "--zero-terms", ref.zero_terms];
const validate = schemaValidator("fit");

for (const family of ["zip", "zinb", "hurdle-poisson", "hurdle-negbin"])
  test(`fit --family ${family}: JSON count part, zero part and alpha as scipy's (1e-6), and the schema holds`, () => {
    const r = runCli([...ARGS, "--family", family, "--format", "json"]);
    assert.equal(r.code, 0, r.stderr);
    const j = JSON.parse(r.stdout);
    assert.ok(validate(j), JSON.stringify((validate as { errors?: unknown }).errors));
    const want = ref.fits[family];
    assert.equal(j.family, family);
    j.coefficients.forEach((c: { estimate: number; std_error: number }, k: number) => {
      assertRel(c.estimate, want.count[k], 1e-6, `count ${k}`);
      assertRel(c.std_error, want.count_se[k], 1e-4, `count SE ${k}`);
    });
    j.zero_part.coefficients.forEach((c: { estimate: number; odds_ratio: number }, k: number) => {
      assertRel(c.estimate, want.zero[k], 1e-6, `zero ${k}`);
      assertRel(c.odds_ratio, Math.exp(want.zero[k]), 1e-6, `odds ratio ${k}`);
    });
    assert.equal(j.zero_part.odds_of, family.startsWith("hurdle") ? "non-zero count" : "structural zero");
    assertRel(j.log_likelihood, want.log_likelihood, 1e-9, "log-likelihood");
    assert.equal(j.deviance, null);
    if (want.alpha !== null) assertRel(j.negbin.alpha, want.alpha, 1e-6, "alpha");
    assert.ok(j.zeros.observed > 0 && Math.abs(j.zeros.expected - j.zeros.observed) < 0.1 * j.zeros.observed);
  });

test("the text report names the parts; --zero-terms without a zero family and options not yet offered are refused (exit 2)", () => {
  const text = runCli([...ARGS, "--family", "zinb"]).stdout;
  assert.match(text, /Zero part: odds of a structural zero/);
  assert.match(text, /zero counts\s+185 observed/);
  const cases: [string[], RegExp][] = [
    [["fit", DATA, "--model", ref.model, "--zero-terms", "small_unit"], /--zero-terms describes the zero part/],
    [
      [...ARGS, "--family", "zip", "--cluster", "unit", "--gee", "exchangeable"],
      /--gee does not go with the zero-inflated and hurdle families yet/,
    ],
    [[...ARGS, "--family", "zip", "--summary-by", "unit"], /--summary-by does not go with/],
    [[...ARGS.slice(0, -1), "small_unit +", "--family", "zip"], /--zero-terms:/],
  ];
  for (const [args, re] of cases) {
    const r = runCli(args);
    assert.equal(r.code, 2, args.join(" "));
    assert.match(r.stderr, re);
  }
});

test("--family auto tries the excess-zero families only when the check finds more zeros than either plain model expects", () => {
  const z = JSON.parse(runCli([...ARGS, "--family", "auto", "--format", "json"]).stdout);
  assert.equal(z.family, "zinb", "the data come from a zero-inflated NB2");
  assert.equal(z.family_choice.requested, "auto");
  assert.match(z.family_choice.reason, /more zeros than either plain model expects.*zinb has the smallest AIC/);
  const plain = JSON.parse(
    runCli([
      "fit",
      "examples/clinic_visits.csv",
      "--model",
      "visits ~ clinic",
      "--exposure",
      "open_hours",
      "--family",
      "auto",
      "--format",
      "json",
      "--quiet",
    ]).stdout,
  );
  assert.equal(plain.family, "negbin", "no excess zeros: a plain family");
  assert.equal(plain.zero_part, undefined);
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-zero-"));
  const blocked = JSON.parse(runCli([...ARGS, "--family", "auto", "--format", "json", "--summary-by", "unit"]).stdout);
  assert.equal(blocked.family, "negbin");
  assert.ok(blocked.warnings.some((w: string) => /were not tried because --summary-by/.test(w)));
  // The family auto chose is the one saved for predict.
  const saved = runCli([...ARGS, "--family", "auto", "--format", "json", "--save-model", join(dir, "m.json")]);
  assert.equal(saved.code, 0, saved.stderr);
  const model = JSON.parse(readFileSync(join(dir, "m.json"), "utf8"));
  assert.equal(model.family, "zinb");
  assert.equal(model.zero_part.probability_of, "structural_zero");
});

test("--robust and --cluster unit: sandwich standard errors of both parts as the runner's (scores by differences, 1e-4); t on G − 1", () => {
  for (const family of ["zinb", "hurdle-poisson"]) {
    const want = ref.fits[family];
    const robust = JSON.parse(runCli([...ARGS, "--family", family, "--robust", "--format", "json"]).stdout);
    assert.equal(robust.standard_errors, "robust");
    const cl = JSON.parse(runCli([...ARGS, "--family", family, "--cluster", "unit", "--format", "json"]).stdout);
    assert.ok(validate(cl), JSON.stringify((validate as { errors?: unknown }).errors));
    assert.equal(cl.standard_errors, "cluster");
    assert.deepEqual(cl.covariance, {
      type: "cluster-CR1",
      clusters: [{ column: "unit", count: want.clusters }],
      t_df: want.clusters - 1,
    });
    for (const [j, se] of [
      [robust, want.robust_se],
      [cl, want.cluster_se],
    ] as const) {
      j.coefficients.forEach((c: { std_error: number }, k: number) =>
        assertRel(c.std_error, se[k], 1e-4, `${family} count SE ${k}`),
      );
      j.zero_part.coefficients.forEach((c: { std_error: number }, k: number) =>
        assertRel(c.std_error, se[3 + k], 1e-4, `${family} zero SE ${k}`),
      );
    }
  }
});

test("zinb profile-likelihood limits of a count-part and a zero-part coefficient match scipy's constrained fits with brentq (1e-5)", () => {
  const r = runCli([...ARGS, "--family", "zinb", "--format", "json"]);
  assert.equal(r.code, 0, r.stderr);
  const j = JSON.parse(r.stdout);
  const rehab = j.coefficients.find((c: { term: string }) => c.term === "ward=rehab");
  const small = j.zero_part.coefficients.find((c: { term: string }) => c.term === "small_unit");
  const want = ref.profile_zinb;
  assertRel(Math.log(rehab.profile[0]), want["ward=rehab"][0], 1e-5, "rehab lower");
  assertRel(Math.log(rehab.profile[1]), want["ward=rehab"][1], 1e-5, "rehab upper");
  assertRel(Math.log(small.profile[0]), want.small_unit[0], 1e-5, "small_unit lower");
  assertRel(Math.log(small.profile[1]), want.small_unit[1], 1e-5, "small_unit upper");
  assert.deepEqual(rehab.profile_status, { lower: "limit", upper: "limit" });
  // With a sandwich the limits are Wald, and asking for profile limits says why not.
  const bad = runCli([...ARGS, "--family", "zinb", "--robust", "--intervals", "profile"]);
  assert.equal(bad.code, 2);
  assert.match(bad.stderr, /--intervals profile\|both with --robust or --cluster does not go/);
});

test("--cluster unit --cluster month: the two-way sandwich of both parts as the runner's (1e-4), t on the smaller G − 1", () => {
  const want = ref.fits.zinb;
  const r = runCli([...ARGS, "--family", "zinb", "--cluster", "unit", "--cluster", "month", "--format", "json"]);
  assert.equal(r.code, 0, r.stderr);
  const j = JSON.parse(r.stdout);
  assert.equal(j.covariance.type, "two-way-cluster-CR1");
  assert.equal(j.covariance.t_df, 11);
  j.coefficients.forEach((c: { std_error: number }, k: number) =>
    assertRel(c.std_error, want.two_way_se[k], 1e-4, `count SE ${k}`),
  );
  j.zero_part.coefficients.forEach((c: { std_error: number }, k: number) =>
    assertRel(c.std_error, want.two_way_se[3 + k], 1e-4, `zero SE ${k}`),
  );
  assertRel(j.negbin.alpha_std_error, j.negbin.alpha * want.two_way_se[5], 1e-4, "alpha SE");
});

test("--family auto with --cluster: the chosen zero family reports the cluster-robust covariance asked for", () => {
  const j = JSON.parse(runCli([...ARGS, "--family", "auto", "--cluster", "unit", "--format", "json"]).stdout);
  assert.equal(j.family, "zinb");
  assert.equal(j.standard_errors, "cluster");
  j.coefficients.forEach((c: { std_error: number }, k: number) =>
    assertRel(c.std_error, ref.fits.zinb.cluster_se[k], 1e-4, `count SE ${k}`),
  );
});
