// The predictive table (ratio recurrences from a rescaled p(0)) against
// scipy.stats.poisson and scipy.stats.nbinom (predictive_runner.py): upper
// tails into the far tail, and quantiles; and a mixture against the average
// of the single distributions.
import { test } from "node:test";
import assert from "node:assert/strict";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { predictiveTable, tableQuantile } from "../../src/infer/predictive.js";
import { negbinCdf, poissonCdf } from "../../src/math/distributions.js";
import { FIXTURES, assertRel } from "../helpers.js";

const ref = JSON.parse(readFileSync(join(FIXTURES, "scipy", "predictive_expected.json"), "utf8"));

test("upper tails P(Y ≥ k) match scipy.stats (Poisson and NB2) to 1e-8 relative, far tails included", () => {
  for (const c of ref.cases) {
    const t = predictiveTable(Float64Array.of(c.mu), Float64Array.of(c.alpha), c.observed);
    const what = `mu ${c.mu}, alpha ${c.alpha}, k ${c.observed}`;
    if (c.upper_tail === 0) assert.ok(t.upperTail! < 1e-300, what);
    else assertRel(t.upperTail!, c.upper_tail, 1e-8, what);
  }
});

test("quantiles match scipy.stats' ppf", () => {
  for (const c of ref.cases) {
    const t = predictiveTable(Float64Array.of(c.mu), Float64Array.of(c.alpha), null);
    for (const [level, k] of Object.entries(c.quantiles))
      assert.equal(tableQuantile(t.pmf, Number(level)), k, `mu ${c.mu}, alpha ${c.alpha}, level ${level}`);
  }
});

test("a mixture's table is the average of its parts (against @stdlib's incomplete beta and gamma)", () => {
  const mus = Float64Array.of(3, 7.5, 12, 0.4);
  const alphas = Float64Array.of(0.3, 0, 1.2, 0.05);
  const t = predictiveTable(mus, alphas, 9);
  let cdf = 0;
  for (let k = 0; k <= 20; k++) {
    cdf += t.pmf[k];
    let direct = 0;
    for (let d = 0; d < 4; d++) direct += (alphas[d] > 0 ? negbinCdf(k, mus[d], alphas[d]) : poissonCdf(k, mus[d])) / 4;
    assertRel(cdf, direct, 1e-12, `cdf at ${k}`);
  }
  let tail8 = 0;
  for (let d = 0; d < 4; d++)
    tail8 += (1 - (alphas[d] > 0 ? negbinCdf(8, mus[d], alphas[d]) : poissonCdf(8, mus[d]))) / 4;
  assertRel(t.upperTail!, tail8, 1e-12, "P(Y ≥ 9)");
});
