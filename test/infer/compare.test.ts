// Term tests and model comparison.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { fitCsv, rng, runCli, simulateRates } from "../helpers.js";

const csv = simulateRates(rng(55), 300, 0, 3)
  .replace("g,x,e,y", "g,x,e,y")
  .split("\n")
  .map((l, i) => (i === 0 ? `${l},h` : l ? `${l},${["p", "q"][i % 2]}` : l))
  .join("\n");
const file = join(mkdtempSync(join(tmpdir(), "tallyfit-")), "sim.csv");
writeFileSync(file, csv);

test("compare: the LR statistic of two nested Poisson models equals the difference of their deviances exactly", () => {
  const r = runCli([
    "compare",
    file,
    "--model",
    "y ~ g",
    "--model",
    "y ~ g + x",
    "--exposure",
    "e",
    "--format",
    "json",
  ]);
  assert.equal(r.code, 0, r.stderr);
  const j = JSON.parse(r.stdout);
  assert.equal(j.schema, "tallyfit.compare/1");
  const pair = j.nested[0];
  assert.deepEqual([pair.smaller, pair.larger, pair.df], [1, 2, 1]);
  const diff = j.models[0].deviance - j.models[1].deviance;
  assert.ok(Math.abs(pair.statistic - diff) <= 1e-9 * Math.abs(diff), `${pair.statistic} vs ${diff}`);
  assert.ok(j.models[1].preferred_by.includes("AIC"));
});

test("the term test of a factor equals the compare test of the models with and without it", () => {
  const { summary } = fitCsv(csv, "y ~ g + x + h", { exposure: "e" });
  const tt = summary.term_tests!.find((t) => t.term === "g")!;
  assert.equal(tt.df, 2, "a factor with 3 levels has 2 df");
  const r = JSON.parse(
    runCli(["compare", file, "--model", "y ~ x + h", "--model", "y ~ g + x + h", "--exposure", "e", "--format", "json"])
      .stdout,
  );
  assert.ok(Math.abs(r.nested[0].statistic - tt.statistic!) < 1e-8 * tt.statistic!);
  assert.ok(Math.abs(r.nested[0].p_value - tt.p_value!) < 1e-8 * tt.p_value! + 1e-300);
});

test("term tests respect marginality: a main effect inside an interaction is not tested on its own", () => {
  const { summary } = fitCsv(csv, "y ~ g*h + x", { exposure: "e" });
  const g = summary.term_tests!.find((t) => t.term === "g")!;
  assert.equal(g.statistic, null);
  assert.match(g.note!, /part of g:h/);
  const gh = summary.term_tests!.find((t) => t.term === "g:h")!;
  assert.equal(gh.df, 2);
  assert.ok(gh.statistic! >= 0);
});

test("compare: Poisson against negative binomial of the same terms uses the boundary test; non-nested models use criteria only", () => {
  const r = runCli([
    "compare",
    file,
    "--model",
    "y ~ g + x",
    "--model",
    "y ~ g + x",
    "--model",
    "y ~ h",
    "--family",
    "poisson",
    "--family",
    "negbin",
    "--family",
    "poisson",
    "--exposure",
    "e",
  ]);
  assert.equal(r.code, 0, r.stderr);
  assert.match(r.stdout, /1 ⊂ 2 +LR chi-square, boundary mixture +1/);
  assert.match(r.stdout, /Not nested: 1 and 3; 2 and 3/);
  assert.equal(
    runCli(["compare", file, "--model", "y ~ g", "--exposure", "e"]).code,
    2,
    "one model is not a comparison",
  );
});

test("compare fits every model on the rows complete for all of them", () => {
  const withNa = csv
    .split("\n")
    .map((l, i) => (i === 5 ? l.replace(/,(p|q)$/, ",NA") : l))
    .join("\n");
  const f = join(mkdtempSync(join(tmpdir(), "tallyfit-")), "na.csv");
  writeFileSync(f, withNa);
  const j = JSON.parse(
    runCli(["compare", f, "--model", "y ~ g", "--model", "y ~ g + h", "--exposure", "e", "--format", "json"]).stdout,
  );
  assert.equal(j.n_used, 299);
  assert.equal(j.dropped.missing, 1);
});
