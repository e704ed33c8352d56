// --gee on the command line (clustered counts): the estimates, working
// correlation and robust standard errors of the GEE report and JSON, matched
// to scipy.optimize.root on the estimating equations (gee_runner.py) to 1e-6;
// the JSON validates against fit-1.schema.json; the model file keeps the GEE
// covariance for predict; and the options that do not fit together are
// refused with a located message and exit 2.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { assertRel, FIXTURES, runCli, schemaValidator } from "../helpers.js";

const ref = JSON.parse(readFileSync(join(FIXTURES, "scipy", "gee_expected.json"), "utf8"));
const DATA = join(FIXTURES, "scipy", ref.data);
const ARGS = [
  "fit",
  DATA,
  "--model",
  ref.model,
  "--exposure",
  ref.exposure,
  "--cluster",
  "clinic",
  "--tolerance",
  "1e-13",
];

const validate = schemaValidator("fit");

for (const [name, extra] of [
  ["poisson_exchangeable", ["--gee", "exchangeable"]],
  ["poisson_ar1", ["--gee", "ar1", "--order-by", "day"]],
  ["negbin_ar1", ["--gee", "ar1", "--order-by", "day", "--family", "negbin"]],
] as const) {
  test(`fit ${extra.join(" ")}: estimates, ρ and robust SEs as scipy's root of the equations (1e-6), JSON fields`, () => {
    const r = runCli([...ARGS, ...extra, "--format", "json"]);
    assert.equal(r.code, 0, r.stderr);
    const j = JSON.parse(r.stdout);
    assert.ok(validate(j), JSON.stringify((validate as { errors?: unknown }).errors));
    const want = ref.cases[name];
    j.coefficients.forEach((c: { estimate: number; std_error: number }, k: number) => {
      assertRel(c.estimate, want.estimate[k], 1e-6, `estimate ${k}`);
      assertRel(c.std_error, Math.sqrt(want.robust_covariance[k][k]), 1e-6, `SE ${k}`);
    });
    assertRel(j.gee.correlation, want.correlation, 1e-6, "ρ");
    assert.equal(j.gee.working_correlation, extra[1]);
    assert.equal(j.gee.order_by, extra[1] === "ar1" ? "day" : null);
    assert.equal(j.covariance.type, `gee-${extra[1]}-CR1`);
    assert.equal(j.covariance.t_df, 17);
    assert.equal(j.test_distribution, "t");
    assert.equal(j.term_tests[0].test, "Wald F");
    j.gee.model_std_errors.forEach((se: number, k: number) =>
      assertRel(se, Math.sqrt(want.bread_inverse[k][k]), 1e-6, `model-based SE ${k}`),
    );
  });
}

test("fit --gee: the text report names the working correlation and ρ; the model file keeps the GEE covariance for predict", () => {
  const r = runCli([...ARGS, "--gee", "exchangeable"]);
  assert.equal(r.code, 0, r.stderr);
  assert.match(r.stdout, /Within-cluster correlation \(generalized estimating equations\)/);
  assert.match(
    r.stdout,
    new RegExp(`ρ \\(moment estimate\\)\\s+${ref.cases.poisson_exchangeable.correlation.toFixed(4)}`),
  );
  const md = runCli([...ARGS, "--gee", "exchangeable", "--format", "markdown"]);
  // Markdown carries the text report's GEE block: the working correlation and ρ, and the errors' source.
  assert.match(md.stdout, /GEE robust \(CR1\) standard errors over 18 clinic clusters/);
  assert.match(
    md.stdout,
    new RegExp(`\\| ρ \\(moment estimate\\) \\| ${ref.cases.poisson_exchangeable.correlation.toFixed(4)} \\|`),
  );
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-gee-"));
  const model = join(dir, "m.json");
  assert.equal(runCli([...ARGS, "--gee", "exchangeable", "--save-model", model, "--quiet"]).code, 0);
  const m = JSON.parse(readFileSync(model, "utf8"));
  assert.equal(m.covariance.type, "gee-exchangeable-CR1");
  assertRel(m.covariance.matrix[1][1], ref.cases.poisson_exchangeable.robust_covariance[1][1], 1e-6, "saved variance");
  const pr = runCli(["predict", "--model-file", model, DATA, "--format", "json", "--draws", "200", "--quiet"]);
  assert.equal(pr.code, 0, pr.stderr);
});

test("--gee without --cluster, ar1 without --order-by, --order-by alone, and repeated order values are refused (exit 2)", () => {
  const base = ["fit", DATA, "--model", ref.model, "--exposure", "hours"];
  const cases: [string[], RegExp][] = [
    [[...base, "--gee", "exchangeable"], /give the clusters with --cluster COL/],
    [[...base, "--cluster", "clinic", "--gee", "ar1"], /needs the order of the rows.*--order-by/],
    [
      [...base, "--cluster", "clinic", "--order-by", "day"],
      /--order-by orders the rows within a cluster for --gee ar1/,
    ],
    [[...base, "--cluster", "clinic", "--gee", "wobbly"], /--gee must be one of independence, exchangeable, ar1/],
    [
      [...base, "--cluster", "clinic", "--gee", "ar1", "--order-by", "dya"],
      /--order-by column 'dya' is not in the file/,
    ],
  ];
  for (const [args, re] of cases) {
    const r = runCli(args);
    assert.equal(r.code, 2, args.join(" "));
    assert.match(r.stderr, re);
    assert.doesNotMatch(r.stderr, /at .*\.js:\d+/, "no stack trace");
  }
  // Two rows of one clinic on the same day: the order is ambiguous.
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-gee-"));
  const file = join(dir, "dup.csv");
  const lines = readFileSync(DATA, "utf8").trimEnd().split("\n");
  const first = lines[1].split(",");
  writeFileSync(file, `${[...lines, first.join(",")].join("\n")}\n`);
  const r = runCli([
    "fit",
    file,
    "--model",
    ref.model,
    "--exposure",
    "hours",
    "--cluster",
    "clinic",
    "--gee",
    "ar1",
    "--order-by",
    "day",
  ]);
  assert.equal(r.code, 2);
  assert.match(
    r.stderr,
    new RegExp(`rows 2 and ${lines.length + 1}, column 'day': both rows of clinic '${first[0]}' are at '${first[1]}'`),
  );
});
