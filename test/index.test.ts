// The library API: load, build, fit and report through the package entry point.
import { test } from "node:test";
import assert from "node:assert/strict";
import * as tf from "../src/index.js";

test("every stage is usable from the package entry point", () => {
  const table = tf.parseTable("g,e,y\na,1,3\nb,2,9\na,2,4\nb,1,5\n", { source: "inline" });
  const design = tf.buildDesign(table, tf.parseFormula("y ~ g"), { exposure: "e" });
  const mf = tf.fitCounts(design, { family: "poisson" });
  const summary = tf.summarizeFit(design, mf, { level: 0.9, profiles: tf.profileAll(design, mf, 0.9) });
  // Closed form: rate(b)/rate(a) = (14/3)/(7/3) = 2.
  assert.ok(Math.abs(summary.coefficients[1].rate_ratio! - 2) < 1e-12);
  const text = tf.renderFitText(summary, { style: tf.makeStyle(false), width: 90, intervals: "both" });
  assert.match(text, /g=b +2\.000/);
  assert.match(text, /90% intervals/);
  assert.equal(JSON.parse(tf.renderJson(summary)).level, 0.9);
});

test("merged patterns and the parallel analysis through the entry point", async () => {
  let csv = "g,e,y\n";
  for (let i = 0; i < 60; i++) csv += `${i % 3 ? "a" : "b"},${1 + (i % 4)},${(i * 7) % 5}\n`;
  const design = tf.buildDesign(tf.parseTable(csv, { source: "inline" }), tf.parseFormula("y ~ g"), { exposure: "e" });
  const pm = tf.mergePatterns(design, "covariates")!;
  assert.equal(pm.patterns, 2);
  const merged = tf.fitCounts(design, { family: "poisson", patterns: pm });
  const rows = tf.fitCounts(design, { family: "poisson" });
  assert.ok(
    Math.abs(merged.fit.deviance - rows.fit.deviance) < 1e-9 * rows.fit.deviance,
    "the deviance is stated per row",
  );
  assert.equal(merged.fit.mu.length, 60);
  const o = { family: "poisson" as const, level: 0.95, intervals: "both" as const, merge: "always" as const };
  assert.deepEqual((await tf.analyzeFitParallel(design, o)).summary, tf.analyzeFit(design, o).summary);
});
