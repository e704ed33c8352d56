// compare with zero-inflated and hurdle models (excess zeros): the
// likelihood-ratio test of zip against zinb uses the boundary mixture, with
// the log-likelihoods of scipy.optimize's fits (zero_runner.py); a plain
// family against a zero family is left to AIC and BIC, and the report says
// why; the JSON validates against compare-1.schema.json.
import { test } from "node:test";
import assert from "node:assert/strict";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { zeroPair } from "../../src/infer/compare-zero.js";
import { chiSquareUpperTail } from "../../src/math/distributions.js";
import { assertRel, FIXTURES, runCli, schemaValidator } from "../helpers.js";

const ref = JSON.parse(readFileSync(join(FIXTURES, "scipy", "zero_expected.json"), "utf8"));
const DATA = join(FIXTURES, "scipy", ref.data);
const validate = schemaValidator("compare");

test("compare negbin, zip, zinb: zip ⊂ zinb by the boundary-mixture LR from scipy's log-likelihoods; plain against zero by AIC only", () => {
  const m = ["--model", ref.model];
  const r = runCli([
    "compare",
    DATA,
    "--exposure",
    ref.exposure,
    "--zero-terms",
    ref.zero_terms,
    ...m,
    "--family",
    "negbin",
    ...m,
    "--family",
    "zip",
    ...m,
    "--family",
    "zinb",
    "--format",
    "json",
  ]);
  assert.equal(r.code, 0, r.stderr);
  const j = JSON.parse(r.stdout);
  assert.ok(validate(j), JSON.stringify((validate as { errors?: unknown }).errors));
  assertRel(j.models[1].log_likelihood, ref.fits.zip.log_likelihood, 1e-9, "zip log-likelihood");
  assertRel(j.models[2].log_likelihood, ref.fits.zinb.log_likelihood, 1e-9, "zinb log-likelihood");
  const pair = j.nested.find((p: { smaller: number; larger: number }) => p.smaller === 2 && p.larger === 3);
  const lr = 2 * (ref.fits.zinb.log_likelihood - ref.fits.zip.log_likelihood);
  assert.equal(pair.test, "LR chi-square, boundary mixture");
  assertRel(pair.statistic, lr, 1e-7, "LR");
  assertRel(pair.p_value, 0.5 * chiSquareUpperTail(lr, 1), 1e-6, "p");
  assert.deepEqual(j.not_nested, [
    [1, 2],
    [1, 3],
  ]);
  assert.ok(j.notes.some((n: string) => /Wilson 2015/.test(n)));
  assert.deepEqual(j.models[2].preferred_by, ["AIC", "BIC"]);
});

test("zeroPair: which pairs get which test (an ordinary LR for fewer zero terms, none for plain against zero or zip against hurdle)", () => {
  const m = (family: string, zeroTerms: string[], logLik: number, parameters: number, countTerms = ["ward"]) => ({
    family,
    countTerms,
    zeroTerms,
    intercept: true,
    logLik,
    parameters,
  });
  const fewer = zeroPair(m("zinb", [], -1330, 5), m("zinb", ["small_unit"], -1317.5, 6), chiSquareUpperTail)!;
  assert.equal(fewer.test, "LR chi-square");
  assert.equal(fewer.df, 1);
  assertRel(fewer.statistic!, 25, 1e-12, "LR");
  assertRel(fewer.p_value!, chiSquareUpperTail(25, 1), 1e-12, "p");
  assert.equal(zeroPair(m("negbin", [], -1330, 5), m("zinb", [], -1320, 6), chiSquareUpperTail), null);
  assert.equal(zeroPair(m("zip", [], -1330, 5), m("hurdle-poisson", [], -1320, 5), chiSquareUpperTail), null);
  assert.equal(
    zeroPair(m("zip", ["small_unit"], -1330, 6), m("zip", [], -1320, 5), chiSquareUpperTail),
    null,
    "the zero terms of the first are not among the second's",
  );
  assert.equal(zeroPair(m("zip", [], -1330, 5, ["ward", "x"]), m("zip", [], -1320, 6), chiSquareUpperTail), null);
});
