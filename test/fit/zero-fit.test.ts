// The excess-zero families (groundwork for the zeros issue): estimates, their
// standard errors (inverse observed information), alpha and the
// log-likelihood of the zero-inflated and hurdle Poisson and NB2 models
// against scipy.optimize on the four log-likelihoods written out in
// test/fixtures/scipy/zero_runner.py (a factor and an exposure in the count
// part, a term in the zero part); and the boundary of no excess zeros.
import { test } from "node:test";
import assert from "node:assert/strict";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { buildDesign } from "../../src/design/design.js";
import { fitCounts } from "../../src/fit/count-fit.js";
import { fitZeroModel } from "../../src/fit/zero-fit.js";
import { rowTerms, ZERO_FAMILIES } from "../../src/fit/zero-likelihood.js";
import { parseFormula } from "../../src/formula/formula.js";
import { parseTable } from "../../src/io/csv.js";
import { FIXTURES, assertRel, poissonDraw, rng } from "../helpers.js";

const ref = JSON.parse(readFileSync(join(FIXTURES, "scipy", "zero_expected.json"), "utf8"));

function designs(text: string) {
  const table = parseTable(text, { source: "zero_wards.csv" });
  const count = buildDesign(table, parseFormula(ref.model), { exposure: ref.exposure });
  const zero = buildDesign(table, parseFormula(`falls ~ ${ref.zero_terms}`), { exposure: ref.exposure });
  return { count, zero };
}

for (const family of ZERO_FAMILIES)
  test(`${family}: estimates, SEs, alpha and log-likelihood match scipy.optimize on the written-out likelihood`, () => {
    const { count, zero } = designs(readFileSync(join(FIXTURES, "scipy", ref.data), "utf8"));
    const plain = fitCounts(count, { family: "poisson" });
    const z = fitZeroModel(count, zero, {
      family,
      countColumns: plain.fit.estimable,
      countStart: Float64Array.from(plain.fit.estimable, (c) => plain.fit.beta[c]),
      zeroColumns: zero.columns.map((_, c) => c),
    });
    const want = ref.fits[family];
    assert.ok(z.converged, "converged");
    assert.deepEqual(z.boundary, { zeroPart: false, alpha: false });
    assertRel(z.logLik, want.log_likelihood, 1e-9, "log-likelihood");
    want.count.forEach((b: number, k: number) => assertRel(z.beta[k], b, 1e-6, `count ${ref.count_terms[k]}`));
    want.zero.forEach((g: number, k: number) => assertRel(z.gamma[k], g, 1e-6, `zero ${ref.zero_terms_names[k]}`));
    const m = z.covariance!.p;
    want.count_se.forEach((se: number, k: number) =>
      assertRel(Math.sqrt(z.covariance!.data[k * m + k]), se, 1e-4, `SE count ${k}`),
    );
    want.zero_se.forEach((se: number, k: number) =>
      assertRel(Math.sqrt(z.covariance!.data[(3 + k) * m + 3 + k]), se, 1e-4, `SE zero ${k}`),
    );
    if (want.alpha !== null) {
      assertRel(z.alpha, want.alpha, 1e-6, "alpha");
      assertRel(Math.sqrt(z.covariance!.data[(m - 1) * m + m - 1]), want.log_alpha_se, 1e-4, "SE log alpha");
    }
  });

test("Poisson data without excess zeros: the zero-inflated Poisson reaches π → 0, says so, and keeps the Poisson fit", () => {
  const u = rng(515);
  const lines = ["ward,small_unit,bed_days,falls"];
  for (let i = 0; i < 600; i++) {
    const beds = 200 + Math.floor(u() * 700);
    lines.push(
      `${["medicine", "surgery", "rehab"][i % 3]},${u() < 0.4 ? 1 : 0},${beds},${poissonDraw(u, (beds / 100) * 0.3)}`,
    );
  }
  const { count, zero } = designs(`${lines.join("\n")}\n`);
  const plain = fitCounts(count, { family: "poisson" });
  const z = fitZeroModel(count, zero, {
    family: "zip",
    countColumns: plain.fit.estimable,
    countStart: Float64Array.from(plain.fit.estimable, (c) => plain.fit.beta[c]),
    zeroColumns: zero.columns.map((_, c) => c),
  });
  // Here the likelihood is largest with π → 0 in the units without the flag: the zero part is at its boundary.
  assert.equal(z.boundary.zeroPart, true);
  assert.ok(z.converged);
  plain.fit.estimable.forEach((c, k) => assert.ok(Math.abs(z.beta[k] - plain.fit.beta[c]) < 0.05, `count ${k}`));
  assert.ok(z.covariance !== null, "the count part keeps its standard errors");
});

test("the NB2 forms' row log-likelihood and scores near alpha's boundary equal the Poisson's (no cancellation at alpha = 1e-17)", () => {
  for (const family of ["zinb", "hurdle-negbin"] as const)
    for (const y of [0, 1, 7, 54, 400]) {
      const eta = Math.log(y + 0.5);
      const nb = rowTerms(family, y, eta, -0.4, Math.log(1e-17));
      const poisson = rowTerms(family === "zinb" ? "zip" : "hurdle-poisson", y, eta, -0.4, 0);
      assertRel(nb.logLik, poisson.logLik, 1e-9, `${family} log-lik at y = ${y}`);
      assertRel(nb.dEta, poisson.dEta, 1e-9, `${family} score at y = ${y}`);
      assert.ok(Math.abs(nb.dA) < 1e-6, `${family} alpha score at y = ${y}: ${nb.dA}`);
    }
});
