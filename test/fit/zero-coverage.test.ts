// Recovery of the zero-inflated NB2 by seeded simulation (excess zeros):
// 200 data sets of 400 ward-months from a ZINB with known count-part and
// zero-part coefficients; the 95% Wald intervals (inverse observed
// information) of both parts cover the true values at about the nominal
// rate (binomial 99.9% limits). Invented data.
import { test } from "node:test";
import assert from "node:assert/strict";
import { buildDesign } from "../../src/design/design.js";
import { fitCounts } from "../../src/fit/count-fit.js";
import { fitZeroModel } from "../../src/fit/zero-fit.js";
import { parseFormula } from "../../src/formula/formula.js";
import { parseTable } from "../../src/io/csv.js";
import { binomialLimits, negbinDraw, rng } from "../helpers.js";

const TRUE = { rehab: 0.5, small: 1.2, zeroIntercept: -1.5, alpha: 0.4 };

test("ZINB: 95% intervals of a count-part and a zero-part coefficient cover the truth at about 95% of 200 data sets", () => {
  const runs = 200;
  let countHits = 0,
    zeroHits = 0;
  for (let s = 0; s < runs; s++) {
    const u = rng(9100 + s);
    const lines = ["ward,small_unit,bed_days,falls"];
    for (let i = 0; i < 400; i++) {
      const rehab = i % 2;
      const small = u() < 0.4 ? 1 : 0;
      const beds = 300 + Math.floor(u() * 500);
      const pi = 1 / (1 + Math.exp(-(TRUE.zeroIntercept + TRUE.small * small)));
      const lambda = (beds / 100) * Math.exp(-0.3 + TRUE.rehab * rehab);
      const y = u() < pi ? 0 : negbinDraw(u, lambda, TRUE.alpha);
      lines.push(`${rehab ? "rehab" : "medicine"},${small},${beds},${y}`);
    }
    const table = parseTable(`${lines.join("\n")}\n`, { source: "sim.csv" });
    const count = buildDesign(table, parseFormula("falls ~ ward"), { exposure: "bed_days" });
    const zero = buildDesign(table, parseFormula("falls ~ small_unit"), { exposure: "bed_days" });
    const plain = fitCounts(count, { family: "poisson" });
    const z = fitZeroModel(count, zero, {
      family: "zinb",
      countColumns: plain.fit.estimable,
      countStart: Float64Array.from(plain.fit.estimable, (c) => plain.fit.beta[c]),
      zeroColumns: [0, 1],
      logAlphaStart: Math.log(0.3),
    });
    const m = z.covariance!.p;
    const covers = (est: number, k: number, truth: number) =>
      Math.abs(est - truth) <= 1.959964 * Math.sqrt(z.covariance!.data[k * m + k]);
    if (covers(z.beta[1], 1, TRUE.rehab)) countHits++;
    if (covers(z.gamma[1], 3, TRUE.small)) zeroHits++;
  }
  const [lo, hi] = binomialLimits(runs, 0.95);
  console.log(`# coverage of ${runs}: count part ${countHits}, zero part ${zeroHits} (limits ${lo}–${hi})`);
  assert.ok(countHits >= lo && countHits <= hi, `count part ${countHits}`);
  assert.ok(zeroHits >= lo && zeroHits <= hi, `zero part ${zeroHits}`);
});
