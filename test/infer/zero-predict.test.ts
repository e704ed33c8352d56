// Predictions and group flags under the excess-zero families, against
// zero-modified scipy.stats distributions and numpy.convolve
// (test/fixtures/scipy/zero_predict_runner.py).
import { test } from "node:test";
import assert from "node:assert/strict";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { analyzePredict } from "../../src/analysis/predict.js";
import { type ModelFile, parseModelFile } from "../../src/io/model-file.js";
import { parseTable } from "../../src/io/csv.js";
import { assertRel, FIXTURES } from "../helpers.js";

interface Expected {
  rows: { site: string; x: number; exposure: number; observed: number }[];
  models: Record<
    string,
    {
      b: number[];
      g: number[];
      alpha: number | null;
      rows: { expected: number; upper_tail: number; quantiles: Record<string, number> }[];
      groups: { group: string; observed: number; upper_tail: number; quantiles: Record<string, number> }[];
    }
  >;
}
const REF: Expected = JSON.parse(readFileSync(join(FIXTURES, "scipy", "zero_predict_expected.json"), "utf8"));

/** A model file with the runner's estimates and a negligible covariance, so that every draw is the estimate. */
function modelOf(family: string): ModelFile {
  const m = REF.models[family];
  const nb = m.alpha !== null;
  const q = 4 + (nb ? 1 : 0);
  const text = JSON.stringify({
    schema: "tallyfit.model/1",
    tool: { name: "tallyfit", version: "test" },
    data: { source: "test", sha256: "0", n_rows: 1, n_used: 1 },
    family,
    link: "log",
    model: "y ~ x",
    response: "y",
    intercept: true,
    terms: [["x"]],
    exposure: "exposure",
    offset: null,
    factors: [],
    numeric: ["x"],
    coefficients: [
      { term: "intercept", status: "estimated", estimate: m.b[0] },
      { term: "x", status: "estimated", estimate: m.b[1] },
    ],
    covariance: {
      terms: ["intercept", "x"],
      zero_terms: ["intercept", "site=B"],
      log_alpha: nb,
      matrix: Array.from({ length: q }, (_, r) => Array.from({ length: q }, (_, c) => (r === c ? 1e-24 : 0))),
      type: "observed-information",
    },
    dispersion_phi: 1,
    alpha: m.alpha,
    alpha_std_error: nb ? 1e-12 : null,
    zero_part: {
      probability_of: family.startsWith("hurdle") ? "non_zero_count" : "structural_zero",
      model: "y ~ site",
      intercept: true,
      terms: [["site"]],
      factors: [{ name: "site", levels: ["A", "B", "C"], reference: "A" }],
      numeric: [],
      coefficients: [
        { term: "intercept", status: "estimated", estimate: m.g[0] },
        { term: "site=B", status: "estimated", estimate: m.g[1] },
        { term: "site=C", status: "estimated", estimate: 0 },
      ],
      boundary: false,
    },
  });
  // zero_terms must list every drawn zero-part coefficient: site=C is drawn too (with a negligible variance).
  const saved = JSON.parse(text) as ModelFile;
  saved.covariance.zero_terms = ["intercept", "site=B", "site=C"];
  saved.covariance.matrix = Array.from({ length: q + 1 }, (_, r) =>
    Array.from({ length: q + 1 }, (_, c) => (r === c ? 1e-24 : 0)),
  );
  return parseModelFile(JSON.stringify(saved), "zero-model.json");
}

const CSV = `site,x,exposure,y\n${REF.rows.map((r) => `${r.site},${r.x},${r.exposure},${r.observed}`).join("\n")}\n`;

for (const family of Object.keys(REF.models))
  test(`predict under ${family}: expected counts, upper tails and quantiles of rows and site totals match scipy.stats and numpy.convolve (zero_predict_runner.py)`, async () => {
    const saved = modelOf(family);
    const table = parseTable(CSV, { source: "new.csv", factors: ["site"] });
    const { result } = await analyzePredict(table, saved, {
      level: 0.95,
      flagLevel: 0.99,
      draws: 40,
      seed: 3,
      per: 1,
      flagBy: ["site"],
    });
    const ref = REF.models[family];
    result.rows.forEach((r, i) => {
      const e = ref.rows[i];
      assertRel(r.expected, e.expected, 1e-9, `row ${i + 1} expected`);
      assertRel(r.upper_tail_p!, e.upper_tail, 1e-8, `row ${i + 1} upper tail`);
      assert.deepEqual(r.prediction_interval, [e.quantiles["0.025"], e.quantiles["0.975"]], `row ${i + 1} interval`);
      assert.equal(r.flag_limit, e.quantiles["0.99"], `row ${i + 1} flag limit`);
      assert.equal(r.flagged, r.observed! > e.quantiles["0.99"]);
    });
    assert.ok(result.groups, "groups");
    result.groups!.forEach((g, k) => {
      const e = ref.groups[k];
      assert.equal(g.group, e.group);
      assert.equal(g.observed, e.observed);
      // The group tables are trimmed where what is left is below 1e-16 of their peak: tails resolved to about 1e-12.
      if (e.upper_tail > 1e-10) assertRel(g.upper_tail_p!, e.upper_tail, 1e-8, `group ${e.group} upper tail`);
      else assert.ok(g.upper_tail_p! < 1e-10, `group ${e.group} far tail ${g.upper_tail_p}`);
      assert.deepEqual(g.prediction_interval, [e.quantiles["0.025"], e.quantiles["0.975"]], `group ${e.group}`);
      assert.equal(g.flag_limit, e.quantiles["0.99"], `group ${e.group} flag limit`);
    });
  });

test("a model file of an excess-zero family without its zero part, or with zero_terms that do not match it, is refused as damaged", () => {
  const saved = modelOf("zinb");
  const noPart = { ...saved, zero_part: undefined };
  assert.throws(() => parseModelFile(JSON.stringify(noPart), "m.json"), /zero_part is missing/);
  const wrong = structuredClone(saved);
  wrong.covariance.zero_terms = ["intercept"];
  assert.throws(() => parseModelFile(JSON.stringify(wrong), "m.json"), /zero_terms do not match/);
});
