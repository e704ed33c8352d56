// Group flags of predict --flag-by (weekly series), by seeded simulation:
// 30 clinics with their own levels and a weekday pattern, NB2 counts
// (alpha 0.1), 20 weeks of weekday training rows and one new week with no
// true excess, 40 data sets (1,200 clinic-weeks). Flagged at the 0.99 level,
// the NB2 model's clinic-week totals must be flagged in 0.25–2.5% of
// clinic-weeks (the acceptance band of the weekly-series issue); totals
// under a Poisson model of the same data, with Poisson-width limits, far
// more often. The data are invented for this check.
import { test } from "node:test";
import assert from "node:assert/strict";
import { analyzePredict } from "../../src/analysis/predict.js";
import { buildDesign } from "../../src/design/design.js";
import { fitCounts } from "../../src/fit/count-fit.js";
import { parseFormula } from "../../src/formula/formula.js";
import { parseTable } from "../../src/io/csv.js";
import { modelFileOf } from "../../src/report/model-file.js";
import { negbinDraw, normalDraw, rng } from "../helpers.js";

const DAYS = ["mon", "tue", "wed", "thu", "fri"];
const DAY_EFFECT = [0.2, 0.05, 0, 0.02, -0.1];

function rows(u: () => number, levels: number[], weeks: number): string {
  const lines = ["clinic,weekday,hours,visits"];
  for (let w = 0; w < weeks; w++)
    levels.forEach((level, c) => {
      DAYS.forEach((day, d) => {
        const mu = 8 * Math.exp(Math.log(2.5) + level + DAY_EFFECT[d]);
        lines.push(`k${c},${day},8,${negbinDraw(u, mu, 0.1)}`);
      });
    });
  return `${lines.join("\n")}\n`;
}

test("clinic-week flags at 0.99: 0.25–2.5% under the NB2 model with no true excess, far more with Poisson-width limits", async () => {
  const runs = 40;
  let nbFlags = 0,
    poisFlags = 0,
    groups = 0,
    expectedByChance = 0;
  for (let s = 0; s < runs; s++) {
    const u = rng(31000 + s);
    const levels = Array.from({ length: 30 }, () => 0.3 * normalDraw(u));
    const train = parseTable(Buffer.from(rows(u, levels, 20)), { source: "train.csv" });
    const week = parseTable(Buffer.from(rows(u, levels, 1)), { source: "week.csv" });
    const design = buildDesign(train, parseFormula("visits ~ clinic + weekday"), { exposure: "hours" });
    for (const family of ["negbin", "poisson"] as const) {
      const model = modelFileOf(design, fitCounts(design, { family }), { version: "test", sha256: "" });
      const { result } = await analyzePredict(week, model, {
        level: 0.95,
        flagLevel: 0.99,
        draws: 60,
        seed: s,
        per: 1,
        flagBy: ["clinic"],
      });
      const flagged = result.groups!.filter((g) => g.flagged).length;
      if (family === "negbin") {
        nbFlags += flagged;
        groups += result.groups!.length;
        expectedByChance += result.chance_flags.groups!;
      } else poisFlags += flagged;
    }
  }
  const nbRate = nbFlags / groups,
    poisRate = poisFlags / groups;
  const shown = `NB2 ${nbFlags}/${groups} (${(100 * nbRate).toFixed(2)}%), Poisson ${poisFlags}/${groups} (${(100 * poisRate).toFixed(2)}%), NB2 expected by chance ${expectedByChance.toFixed(1)}`;
  assert.equal(groups, 1200);
  assert.ok(nbRate >= 0.0025 && nbRate <= 0.025, shown);
  assert.ok(poisRate > 4 * nbRate && poisRate > 0.05, shown);
  // The printed expectation of chance flags agrees with what happened, within the binomial spread.
  assert.ok(Math.abs(nbFlags - expectedByChance) < 4 * Math.sqrt(expectedByChance) + 2, shown);
  console.log(`# ${shown}`);
});
