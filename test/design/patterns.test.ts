// Merging rows by covariate pattern (src/design/patterns.ts) must not change
// any reported figure: the fits over merged patterns are compared with the
// fits over the rows themselves, on seeded simulated data (invented).
import { test } from "node:test";
import assert from "node:assert/strict";
import { buildDesign, type Design } from "../../src/design/design.js";
import { estimatePatterns, mergePatterns } from "../../src/design/patterns.js";
import { parseTable } from "../../src/io/csv.js";
import { parseFormula } from "../../src/formula/formula.js";
import { analyzeFit, MERGE_MIN_ROWS, patternsFor, type MergeChoice } from "../../src/analysis/fit.js";
import { analyzeCheckWithFits } from "../../src/analysis/check.js";
import type { FamilyChoice } from "../../src/fit/count-fit.js";
import type { FitSummary } from "../../src/infer/summary.js";
import { assertRel, negbinDraw, rng, runCli } from "../helpers.js";

/** Ward-month style rows with few distinct covariate values: ward (4), shift (3), a 0/1 column, a coarse score. */
function simulate(
  seed: number,
  n: number,
  o: { alpha: number; exposure: boolean; weights?: boolean; offset?: boolean },
): string {
  const u = rng(seed);
  const wardEffect = [0, 0.3, -0.2, 0.5];
  let csv = "ward,shift,night,score,days,adj,w,falls\n";
  for (let i = 0; i < n; i++) {
    const ward = Math.floor(u() * 4),
      shift = Math.floor(u() * 3),
      night = u() < 0.4 ? 1 : 0;
    const score = Math.floor(u() * 5) / 2;
    const days = o.exposure ? Math.round((5 + u() * 25) * 10) / 10 : 1;
    const adj = o.offset ? Math.round((u() - 0.5) * 100) / 100 : 0;
    const w = o.weights ? 1 + Math.floor(u() * 3) : 1;
    const mu = days * Math.exp(adj - 1 + wardEffect[ward] + 0.1 * shift + 0.25 * night + 0.15 * score);
    csv += `w${ward + 1},s${shift + 1},${night},${score},${days},${adj},${w},${negbinDraw(u, mu, o.alpha)}\n`;
  }
  return csv;
}

function designOf(csv: string, model: string, o: { exposure?: boolean; weights?: boolean; offset?: boolean }): Design {
  const table = parseTable(csv, { source: "sim.csv" });
  return buildDesign(table, parseFormula(model), {
    exposure: o.exposure ? "days" : undefined,
    weights: o.weights ? "w" : undefined,
    offset: o.offset ? "adj" : undefined,
  });
}

/** Both fits, converged well past the default rule so that what is compared is the merge, not where IRLS stopped. */
function fitBoth(design: Design, family: FamilyChoice, robust = false): [FitSummary, FitSummary] {
  const run = (merge: MergeChoice) =>
    analyzeFit(design, { family, level: 0.95, intervals: "both", robust, merge, control: { tolerance: 1e-13 } })
      .summary;
  return [run("always"), run("never")];
}

function assertSame(merged: FitSummary, rows: FitSummary, tol: number): void {
  assert.ok(merged.merged_patterns !== null, "the merged fit says it was merged");
  assert.equal(rows.merged_patterns, null);
  for (const k of ["deviance", "null_deviance", "pearson_chi2", "log_likelihood", "aic", "bic"] as const)
    assertRel(merged[k]!, rows[k]!, tol, k);
  assert.equal(merged.df_residual, rows.df_residual);
  assert.equal(merged.n_used, rows.n_used);
  assertRel(merged.dispersion.phi_used, rows.dispersion.phi_used, tol, "phi");
  rows.coefficients.forEach((c, k) => {
    const m = merged.coefficients[k];
    assert.equal(m.status, c.status, c.term);
    if (c.status !== "estimated") return;
    assertRel(m.estimate!, c.estimate!, tol, `${c.term} estimate`);
    assertRel(m.std_error!, c.std_error!, tol, `${c.term} standard error`);
    for (const side of [0, 1]) assertRel(m.profile![side]!, c.profile![side]!, 1e-8, `${c.term} profile limit ${side}`);
  });
  rows.term_tests!.forEach((t, k) => {
    if (t.statistic === null) return assert.equal(merged.term_tests![k].statistic, null);
    // A term's statistic is a difference of two deviances, each converged to the IRLS tolerance.
    assert.ok(
      Math.abs(merged.term_tests![k].statistic! - t.statistic) <= 1e-6 * (1 + t.statistic),
      `${t.term}: ${merged.term_tests![k].statistic} vs ${t.statistic}`,
    );
  });
}

test("mergePatterns finds the same groups as a plain string key, and keeps the totals", () => {
  const d = designOf(
    simulate(3, 3000, { alpha: 0, exposure: true, weights: true }),
    "falls ~ ward * shift + night + score",
    { exposure: true, weights: true },
  );
  const pm = mergePatterns(d, "covariates")!;
  const key = (i: number) =>
    d.matrix.slots.map((s) => `${s.cols ? s.cols[i] : ""}|${s.values ? s.values[i] : ""}`).join(",");
  const groups = new Map<string, number>();
  for (let i = 0; i < d.n; i++) {
    const k = key(i);
    if (!groups.has(k)) groups.set(k, groups.size);
  }
  assert.equal(pm.patterns, groups.size);
  assert.ok(pm.patterns < d.n / 5, `${pm.patterns} patterns for ${d.n} rows`);
  // Rows in one pattern share the key, and different patterns have different keys.
  const keyOfPattern = new Map<number, string>();
  for (let i = 0; i < d.n; i++) {
    const k = key(i),
      p = pm.pattern[i];
    if (!keyOfPattern.has(p)) keyOfPattern.set(p, k);
    assert.equal(keyOfPattern.get(p), k);
  }
  assert.equal(new Set(keyOfPattern.values()).size, pm.patterns);
  let yRows = 0,
    eRows = 0,
    yPat = 0,
    ePat = 0;
  for (let i = 0; i < d.n; i++) {
    yRows += d.weights![i] * d.y[i];
    eRows += d.weights![i] * d.exposure![i];
  }
  for (let p = 0; p < pm.patterns; p++) {
    yPat += pm.design.y[p];
    ePat += Math.exp(pm.design.offset[p]);
  }
  assert.equal(yPat, yRows);
  assertRel(ePat, eRows, 1e-12, "total exposure");
  assert.equal(pm.design.weights, null, "Poisson patterns carry the weights in their sums");
  // NB patterns: also by offset and count, weights add up.
  const nb = mergePatterns(d, "covariates, offset and count")!;
  assert.ok(nb.patterns > pm.patterns);
  assert.equal(
    nb.design.weights!.reduce((a, b) => a + b, 0),
    d.weights!.reduce((a, b) => a + b, 0),
  );
  for (let i = 0; i < d.n; i++) {
    const p = nb.pattern[i];
    assert.equal(nb.design.y[p], d.y[i]);
    assert.equal(nb.design.offset[p], d.offset[i]);
  }
  assert.equal(mergePatterns(d, "covariates", pm.patterns - 1), null, "gives up past the limit");
  // Few-valued keys are grouped by an array lookup, the rest by hashing: both number the same patterns alike.
  for (const by of ["covariates", "covariates, offset and count"] as const) {
    const hashed = mergePatterns(d, by, d.n, "hash")!;
    const auto = mergePatterns(d, by)!;
    assert.deepEqual(auto.pattern, hashed.pattern, `${by}: the same pattern of every row`);
    assert.deepEqual(auto.design.y, hashed.design.y, `${by}: the same counts`);
    assert.equal(mergePatterns(d, by, hashed.patterns - 1, "hash"), null, `${by}: hashing gives up past the limit`);
  }
});

test("Poisson over merged patterns equals the fit over the rows (exposure, offset, weights, interaction)", () => {
  const o = { alpha: 0, exposure: true, weights: true, offset: true };
  const d = designOf(simulate(11, 4000, o), "falls ~ ward * shift + night + score", o);
  const [m, r] = fitBoth(d, "poisson", true);
  assert.equal(m.merged_patterns!.by, "covariates");
  assert.ok(m.merged_patterns!.patterns < 400);
  assertSame(m, r, 1e-10);
});

test("quasi-Poisson over merged patterns: same phi (from the rows), same F tests and limits", () => {
  const o = { alpha: 0.4, exposure: true };
  const d = designOf(simulate(12, 3000, o), "falls ~ ward + shift + night + score", o);
  const [m, r] = fitBoth(d, "quasipoisson");
  assert.ok(m.dispersion.phi_used > 1.2, "the data are overdispersed");
  assertSame(m, r, 1e-10);
});

test("negative binomial over patterns that share covariates, offset and count equals the fit over the rows", () => {
  const o = { alpha: 0.5, exposure: false };
  const d = designOf(simulate(13, 4000, o), "falls ~ ward + shift + night + score", o);
  const [m, r] = fitBoth(d, "negbin");
  assert.equal(m.merged_patterns!.by, "covariates, offset and count");
  assert.ok(m.merged_patterns!.patterns < 1000, `${m.merged_patterns!.patterns} patterns`);
  assertSame(m, r, 1e-10);
  assertRel(m.negbin!.alpha, r.negbin!.alpha, 1e-10, "alpha");
  assertRel(m.negbin!.alpha_std_error!, r.negbin!.alpha_std_error!, 1e-8, "alpha standard error");
  assertRel(m.negbin!.lr_stat, r.negbin!.lr_stat, 1e-8, "LR statistic against the Poisson");
});

test("negative binomial with frequency weights equals the fit on the expanded rows", () => {
  const u = rng(29);
  let weighted = "g,x,y,w\n",
    expanded = "g,x,y\n";
  for (let i = 0; i < 300; i++) {
    const g = ["a", "b", "c"][i % 3],
      x = Math.round(u() * 20) / 10,
      y = negbinDraw(u, Math.exp(0.5 + 0.3 * x), 0.6),
      w = 1 + Math.floor(u() * 4);
    weighted += `${g},${x},${y},${w}\n`;
    for (let k = 0; k < w; k++) expanded += `${g},${x},${y}\n`;
  }
  const a = analyzeFit(designOf(expanded, "y ~ g + x", {}), {
    family: "negbin",
    level: 0.95,
    intervals: "wald",
    merge: "never",
  }).summary;
  const table = parseTable(weighted, { source: "w.csv" });
  const b = analyzeFit(buildDesign(table, parseFormula("y ~ g + x"), { weights: "w" }), {
    family: "negbin",
    level: 0.95,
    intervals: "wald",
    merge: "never",
  }).summary;
  a.coefficients.forEach((c, k) => {
    assertRel(b.coefficients[k].estimate!, c.estimate!, 1e-10, c.term);
    assertRel(b.coefficients[k].std_error!, c.std_error!, 1e-8, `${c.term} se`);
  });
  assertRel(b.negbin!.alpha, a.negbin!.alpha, 1e-10, "alpha");
  assertRel(b.log_likelihood, a.log_likelihood, 1e-10, "log-likelihood");
  assert.equal(b.df_residual, a.df_residual);
});

test("the dispersion check reads the same over merged patterns", () => {
  const o = { alpha: 0.3, exposure: false };
  const d = designOf(simulate(14, 3000, o), "falls ~ ward + shift + night", o);
  const m = analyzeCheckWithFits(d, { testLevel: 0.05, merge: "always" }).check;
  const r = analyzeCheckWithFits(d, { testLevel: 0.05, merge: "never" }).check;
  r.tests.forEach((t, k) => {
    assert.equal(m.tests[k].name, t.name);
    assert.equal(m.tests[k].flagged, t.flagged, t.name);
    if (t.statistic !== null) assertRel(m.tests[k].statistic!, t.statistic, 1e-8, t.name);
  });
});

test("auto merges only large designs whose patterns are at most half the rows", () => {
  const small = designOf(simulate(15, 2000, { alpha: 0, exposure: true }), "falls ~ ward + shift", { exposure: true });
  assert.equal(patternsFor(small, "poisson", "auto"), null, `under ${MERGE_MIN_ROWS} rows`);
  assert.ok(patternsFor(small, "poisson", "always") !== null);
  const big = designOf(simulate(16, MERGE_MIN_ROWS + 500, { alpha: 0, exposure: true }), "falls ~ ward + shift", {
    exposure: true,
  });
  const pm = patternsFor(big, "poisson", "auto");
  assert.ok(pm !== null && pm.patterns === 12, "4 wards × 3 shifts");
  // With the exposure in the key (NB), nearly every row is its own pattern: no merge.
  assert.equal(patternsFor(big, "negbin", "auto"), null);
  assert.equal(patternsFor(big, "poisson", "never"), null);
});

test("CLI: --merge-patterns always says so in the text and JSON reports; a bad value is exit 2", () => {
  const csv = simulate(17, 600, { alpha: 0, exposure: true });
  const args = ["fit", "-", "--model", "falls ~ ward + night", "--exposure", "days", "--merge-patterns", "always"];
  const j = runCli([...args, "--format", "json"], csv);
  assert.equal(j.code, 0, j.stderr);
  const out = JSON.parse(j.stdout);
  assert.deepEqual(out.merged_patterns, { rows: 600, patterns: 8, by: "covariates" });
  const t = runCli(args, csv);
  assert.match(
    t.stdout.replace(/\s+/g, " "),
    /over 8 patterns \(rows sharing all covariate values merged; every figure is per row\)/,
    "wrapped lines read as one",
  );
  const never = JSON.parse(
    runCli(["fit", "-", "--model", "falls ~ ward + night", "--exposure", "days", "--format", "json"], csv).stdout,
  );
  assert.equal(never.merged_patterns, null, "600 rows: auto does not merge");
  assertRel(out.deviance, never.deviance, 1e-10, "deviance");
  const bad = runCli([...args.slice(0, -1), "sometimes"], csv);
  assert.equal(bad.code, 2);
  assert.match(bad.stderr, /--merge-patterns must be one of auto, always, never \(got 'sometimes'\)/);
});

test("merged patterns keep a level with no events (one-sided profile limit) and an aliased column as the rows do", () => {
  const u = rng(21);
  let csv = "ward,x,x2,days,falls\n";
  for (let i = 0; i < 3000; i++) {
    const ward = ["w1", "w2", "w3", "w_quiet"][i % 4],
      x = Math.floor(u() * 4),
      days = 10 + Math.floor(u() * 5) * 5;
    const y = ward === "w_quiet" ? 0 : negbinDraw(u, (days / 10) * Math.exp(0.2 * x), 0);
    csv += `${ward},${x},${2 * x},${days},${y}\n`;
  }
  const d = designOf(csv, "falls ~ ward + x + x2", { exposure: true });
  const [m, r] = fitBoth(d, "poisson");
  assert.ok(m.merged_patterns!.patterns <= 4 * 4 * 5);
  const quiet = (s: FitSummary) => s.coefficients.find((c) => c.term === "ward=w_quiet")!;
  assert.equal(quiet(m).status, "no_events");
  assert.equal(quiet(m).profile![0], 0, "open lower limit");
  assertRel(quiet(m).profile![1]!, quiet(r).profile![1]!, 1e-8, "upper limit of the level with no events");
  assert.equal(m.coefficients.find((c) => c.term === "x2")!.status, "aliased");
  assertSame(m, r, 1e-10);
});

test("estimatePatterns: exact on small designs, close on a sample of a large one, Infinity when every sampled row differs", () => {
  const small = designOf(simulate(31, 3000, { alpha: 0, exposure: true }), "falls ~ ward + shift + night + score", {
    exposure: true,
  });
  assert.equal(
    estimatePatterns(small, "covariates"),
    mergePatterns(small, "covariates")!.patterns,
    "3,000 rows: every row is read",
  );
  const big = designOf(simulate(32, 60000, { alpha: 0, exposure: true }), "falls ~ ward + shift + night + score", {
    exposure: true,
  });
  const actual = mergePatterns(big, "covariates")!.patterns;
  const est = estimatePatterns(big, "covariates", 200);
  assert.ok(Math.abs(est - actual) <= 0.25 * actual, `estimate ${est.toFixed(0)} from 200 rows, actual ${actual}`);
  assert.equal(
    estimatePatterns(big, "covariates, offset and count", 500),
    Infinity,
    "continuous exposures: no two sampled rows alike",
  );
});
