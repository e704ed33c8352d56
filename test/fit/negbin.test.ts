// The NB2 negative binomial, quasi-Poisson and sandwich errors, against outside references.
import { test } from "node:test";
import assert from "node:assert/strict";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { FIXTURES, assertRel, fitCsv, negbinDraw, rng, simulateRates } from "../helpers.js";
import { fitGlm } from "../../src/fit/kernel/glm.js";
import { nullDeviance } from "../../src/fit/count-fit.js";
import { digamma, lgamma, trigamma } from "../../src/math/distributions.js";
import { harmonic, lgammaRatio } from "../../src/fit/family.js";

const expected = JSON.parse(readFileSync(join(FIXTURES, "scipy", "expected.json"), "utf8"));
const fixture = (name: string) => readFileSync(join(FIXTURES, "scipy", name), "utf8");

test(`NB2 against scipy.optimize on the NB2 log-likelihood (${expected.source}): estimates 1e-5, alpha 1e-4, log-likelihood 1e-6, SEs 1e-4`, () => {
  const ref = expected.negbin_wards;
  const { summary, coef } = fitCsv(fixture(ref.data), ref.model, { exposure: ref.exposure, family: "negbin" });
  assert.equal(summary.family, "negbin");
  for (const [term, r] of Object.entries(ref.coefficients) as [string, { estimate: number; std_error: number }][]) {
    assertRel(coef(term).estimate!, r.estimate, 1e-5, `${term} estimate`);
    assertRel(coef(term).std_error!, r.std_error, 1e-4, `${term} std_error (expected information X'WX)`);
  }
  assertRel(summary.negbin!.alpha, ref.alpha, 1e-4, "alpha");
  assertRel(summary.negbin!.alpha_std_error!, ref.alpha_std_error, 1e-4, "alpha std_error (observed information)");
  assertRel(summary.log_likelihood, ref.log_likelihood, 1e-6, "log-likelihood");
  assertRel(summary.negbin!.poisson_log_likelihood, ref.poisson_log_likelihood, 1e-8, "Poisson log-likelihood");
  const ci = summary.negbin!.alpha_ci!;
  assert.ok(ci[0] < summary.negbin!.alpha && summary.negbin!.alpha < ci[1]);
  // Boundary-corrected LR test of alpha = 0 (Self and Liang 1987).
  assert.ok(summary.negbin!.lr_stat > 10 && summary.negbin!.lr_p_value < 1e-3);
});

test("closed form: intercept-only NB2 fits the sample mean exactly; alpha solves its score equation (scipy brentq + digamma)", () => {
  const ref = expected.negbin_intercept;
  assert.ok(Math.abs(ref.score_at_alpha) < 1e-8);
  const { summary } = fitCsv(fixture(ref.data), "y ~ 1", { family: "negbin" });
  assertRel(summary.baseline!.rate, ref.mean, 1e-12, "fitted mean = sample mean");
  assertRel(summary.negbin!.alpha, ref.alpha, 1e-8, "alpha");
});

test("boundary: Poisson-generated data give alpha ≈ 0 cleanly, LR ≈ 0, p ≥ 0.5", () => {
  const u = rng(4242);
  let zeros = 0;
  for (let k = 0; k < 20; k++) {
    const { summary } = fitCsv(simulateRates(u, 120, 0), "y ~ g + x", { exposure: "e", family: "negbin" });
    const nb = summary.negbin!;
    assert.ok(nb.alpha < 0.05, `alpha ${nb.alpha}`);
    if (nb.boundary) {
      zeros++;
      assert.equal(nb.alpha, 0);
      assert.equal(nb.lr_stat, 0);
      assert.ok(summary.warnings.some((w) => w.includes("reduces to the Poisson")));
    }
    if (nb.lr_stat < 1e-6) assert.ok(nb.lr_p_value >= 0.5);
  }
  assert.ok(zeros >= 5, `about half of Poisson data sets put alpha on the boundary (${zeros}/20)`);
});

test("very large alpha converges or fails clearly", () => {
  const u = rng(5);
  const { summary } = fitCsv(simulateRates(u, 300, 8), "y ~ g + x", { exposure: "e", family: "negbin" });
  assert.ok(summary.converged);
  assert.ok(summary.negbin!.alpha > 3 && summary.negbin!.alpha < 20, `alpha ${summary.negbin!.alpha}`);
});

test("fact of the trade (common practice, no source): quasi-Poisson SEs are the Poisson ones times √φ exactly, φ = X²/df", () => {
  const csv = simulateRates(rng(8), 400, 0.4);
  const p = fitCsv(csv, "y ~ g + x", { exposure: "e" }).summary;
  const q = fitCsv(csv, "y ~ g + x", { exposure: "e", family: "quasipoisson" }).summary;
  const phi = p.pearson_chi2 / p.df_residual;
  assert.ok(phi > 1.5, "overdispersed data have a Pearson ratio well above 1");
  assertRel(q.dispersion.phi_used, phi, 1e-14, "phi");
  p.coefficients.forEach((c, k) => {
    assertRel(q.coefficients[k].estimate!, c.estimate!, 1e-14, `${c.term} estimate unchanged`);
    assertRel(q.coefficients[k].std_error!, c.std_error! * Math.sqrt(phi), 1e-12, `${c.term} se × √φ`);
  });
  assert.equal(q.test_distribution, "t");
});

test("fact of the trade (common practice, no source): for Poisson data the Pearson ratio is near 1", () => {
  const s = fitCsv(simulateRates(rng(9), 2000, 0), "y ~ g + x", { exposure: "e" }).summary;
  assert.ok(Math.abs(s.dispersion.pearson - 1) < 0.1, `ratio ${s.dispersion.pearson}`);
});

test(`sandwich: HC0 matches a direct matrix computation (${expected.source}) to 1e-6`, () => {
  const ref = expected.sandwich_hc0;
  const { coef } = fitCsv(fixture(ref.data), ref.model, { exposure: ref.exposure, robust: true });
  for (const [term, se] of Object.entries(ref.robust_std_error) as [string, number][])
    assertRel(coef(term).std_error!, se, 1e-6, term);
});

test("sandwich: for a correctly specified Poisson model on large data, robust and model SEs agree within a few percent", () => {
  const csv = simulateRates(rng(10), 20000, 0);
  const m = fitCsv(csv, "y ~ g + x", { exposure: "e" }).summary;
  const r = fitCsv(csv, "y ~ g + x", { exposure: "e", robust: true }).summary;
  assert.equal(r.standard_errors, "robust");
  m.coefficients.forEach((c, k) => {
    const ratio = r.coefficients[k].std_error! / c.std_error!;
    assert.ok(Math.abs(ratio - 1) < 0.05, `${c.term}: ratio ${ratio}`);
  });
});

test(`special functions from @stdlib agree with scipy.special (${expected.source}) to 1e-13`, () => {
  const sp = expected.special;
  sp.x.forEach((x: number, i: number) => {
    assertRel(lgamma(x), sp.gammaln[i], 1e-13, `gammaln(${x})`);
    assertRel(digamma(x), sp.digamma[i], 1e-13, `digamma(${x})`);
    assertRel(trigamma(x), sp.trigamma[i], 1e-12, `trigamma(${x})`);
  });
  // Our exact small-y form of log Γ(y + r) − log Γ(r) agrees with the lgamma difference.
  for (const [y, r] of [
    [3, 0.7],
    [40, 12.5],
    [64, 1e3],
  ])
    assertRel(lgammaRatio(y, r), lgamma(y + r) - lgamma(r), 1e-11, `ratio ${y},${r}`);
  // Large r (alpha near 0), where the lgamma difference cancels: against the defining sum Σ_{k<y} log(r + k),
  // and the harmonic sums against Σ 1/(r + k) and Σ 1/(r + k)².
  for (const y of [17, 300, 2000])
    for (const r of [2e5, 1e9, 1e17]) {
      let s = 0,
        d = 0,
        e = 0;
      for (let k = 0; k < y; k++) {
        s += Math.log(r + k);
        d += 1 / (r + k);
        e += 1 / (r + k) ** 2;
      }
      assertRel(lgammaRatio(y, r), s, 1e-12, `ratio ${y},${r}`);
      assertRel(harmonic(y, r)[0], d, 1e-9, `harmonic ${y},${r}`);
      assertRel(harmonic(y, r)[1], e, 1e-9, `harmonic² ${y},${r}`);
    }
});

test("intercept-only deviances (NB2 by a one-coefficient Newton, Poisson in closed form) equal a general IRLS fit of the intercept", () => {
  const u = rng(41);
  let csv = "g,e,w,y\n";
  for (let i = 0; i < 500; i++) {
    const e = 0.5 + u() * 9.5;
    csv += `${["a", "b"][i % 2]},${e.toFixed(3)},${1 + (i % 3)},${negbinDraw(u, e * (i % 2 ? 2 : 0.7), 0.8)}\n`;
  }
  const { design, mf } = fitCsv(csv, "y ~ g", { exposure: "e", weights: "w", family: "negbin" });
  const alpha = mf.negbin!.alpha;
  const interceptOnly = {
    n: design.n,
    p: 1,
    slots: [{ term: -1, colStart: 0, colCount: 1, cols: null, values: null }],
    interceptCol: 0,
  };
  const general = fitGlm(interceptOnly, design, { alpha, control: { tolerance: 1e-15, maxIter: 100 } });
  assertRel(nullDeviance(design, alpha), general.deviance, 1e-10, "intercept-only deviance");
  // The Poisson closed form, the same way.
  const poissonGeneral = fitGlm(interceptOnly, design, { alpha: 0, control: { tolerance: 1e-15, maxIter: 100 } });
  assertRel(nullDeviance(design, 0), poissonGeneral.deviance, 1e-10, "Poisson intercept-only deviance");
  assert.ok(mf.nullDeviance > mf.fit.deviance, "the model explains some of the deviance");
});
