// One exposure rule and one offset builder for fitting and prediction.
import { test } from "node:test";
import assert from "node:assert/strict";
import { buildPredictionDesign } from "../../src/design/predict-design.js";
import { exposureRule, logOffset } from "../../src/design/offset.js";
import { InputError } from "../../src/errors.js";
import { parseTable } from "../../src/io/csv.js";
import type { ModelFile } from "../../src/io/model-file.js";
import { fitCsv } from "../helpers.js";

test("the exposure rule: never negative, and a positive count needs positive exposure", () => {
  assert.equal(exposureRule(2, 5), null);
  assert.equal(exposureRule(0, 0), null);
  assert.equal(exposureRule(0, Number.NaN), null);
  assert.match(exposureRule(-1, 0)!, /cannot be negative/);
  assert.match(exposureRule(0, 3)!, /positive count needs positive exposure/);
});

test("the log offset adds log(exposure) and an offset column over the rows used", () => {
  const e = Float64Array.from([1, 2, 4]),
    o = Float64Array.from([0.5, 0, -1]);
  assert.deepEqual([...logOffset(2, Int32Array.from([2, 0]), e, o)], [Math.log(4) - 1, 0.5]);
  assert.deepEqual([...logOffset(3, null, null, o)], [0.5, 0, -1]);
  assert.deepEqual([...logOffset(1, null, null, null)], [0]);
});

test("prediction and fitting share the rule: zero exposure with a positive count is a located input error in both", () => {
  const csv = "g,e,y\na,1,3\nb,2,9\na,2,4\nb,0,5\n";
  assert.throws(() => fitCsv(csv, "y ~ g", { exposure: "e" }), /row 5, column 'e': exposure 0 with a count of 5/);
  const model: ModelFile = {
    schema: "tallyfit.model/1",
    tool: { name: "tallyfit", version: "test" },
    data: { source: "t", sha256: "", n_rows: 3, n_used: 3 },
    family: "poisson",
    link: "log",
    model: "y ~ 1",
    response: "y",
    intercept: true,
    terms: [],
    exposure: "e",
    offset: null,
    factors: [],
    numeric: [],
    coefficients: [{ term: "intercept", status: "estimated", estimate: 0.5 }],
    covariance: { terms: ["intercept"], matrix: [[0.01]] },
    dispersion_phi: 1,
    alpha: null,
    alpha_std_error: null,
  };
  const table = parseTable("e,y\n2,1\n0,4\n", { source: "new.csv" });
  assert.throws(
    () => buildPredictionDesign(table, model),
    (e: unknown) =>
      e instanceof InputError && /new\.csv, row 3, column 'e': exposure 0 with a count of 4/.test(e.message),
  );
  const ok = buildPredictionDesign(parseTable("e,y\n2,1\n0,0\n", { source: "new.csv" }), model);
  assert.deepEqual([...ok.offset], [Math.log(2), -Infinity]);
});
