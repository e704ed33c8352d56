// Saved models, predictions, prediction limits, flags and group summaries.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { buildDesign } from "../../src/design/design.js";
import { buildPredictionDesign } from "../../src/design/predict-design.js";
import { fitCounts, type FamilyName } from "../../src/fit/count-fit.js";
import { garwoodInterval } from "../../src/infer/garwood.js";
import { predictRows } from "../../src/infer/predict-range.js";
import { parseModelFile } from "../../src/io/model-file.js";
import { parseTable } from "../../src/io/csv.js";
import { parseFormula } from "../../src/formula/formula.js";
import { renderJson } from "../../src/report/json.js";
import { modelFileOf } from "../../src/report/model-file.js";
import { binomialLimits, negbinDraw, rng, runCli } from "../helpers.js";

function simulate(u: () => number, n: number, alpha: number, scale = 1) {
  let csv = "unit,x,e,y\n";
  const eff: Record<string, number> = { u1: 0, u2: 0.3, u3: -0.2, u4: 0.5 };
  for (let i = 0; i < n; i++) {
    const unit = `u${(i % 4) + 1}`;
    const x = u();
    const e = 5 + 10 * u();
    csv += `${unit},${x},${e},${negbinDraw(u, scale * e * 4 * Math.exp(eff[unit] + 0.4 * x), alpha)}\n`;
  }
  return csv;
}

function fitAndSave(csv: string, family: FamilyName) {
  const table = parseTable(csv, { source: "train.csv" });
  const design = buildDesign(table, parseFormula("y ~ unit + x"), { exposure: "e" });
  const mf = fitCounts(design, { family });
  return { design, mf, saved: modelFileOf(design, mf, { version: "test", sha256: "0" }) };
}

function predictCsv(
  saved: ReturnType<typeof fitAndSave>["saved"],
  csv: string,
  draws = 300,
  seed = 1,
  flagLevel = 0.99,
) {
  const table = parseTable(csv, { source: "new.csv", factors: saved.factors.map((f) => f.name) });
  return predictRows(buildPredictionDesign(table, saved), saved, { level: 0.95, flagLevel, draws, seed });
}

test("round trip: predict on the training rows equals the fitted values (1e-10); the model file survives write and read unchanged", () => {
  const csv = simulate(rng(1), 400, 0.2);
  for (const family of ["poisson", "negbin", "quasipoisson"] as const) {
    const { design, mf, saved } = fitAndSave(csv, family);
    const text = renderJson(saved);
    const again = parseModelFile(text, "m.json");
    assert.equal(renderJson(again), text, "byte-identical after a read and a write");
    const pr = predictCsv(again, csv, 50);
    for (let k = 0; k < design.n; k++) {
      const i = design.rowIndex[k];
      const e = pr.rows[i].expected,
        f = mf.fit.mu[k];
      assert.ok(Math.abs(e - f) <= 1e-10 * f, `${family} row ${i}: ${e} vs ${f}`);
    }
  }
});

test("handbook table: exact Poisson 95% limits (Breslow and Day 1987; values recalled from memory, they follow from chi-square quantiles)", () => {
  const table: [number, string, string][] = [
    [0, "0", "3.689"],
    [1, "0.0253", "5.572"],
    [2, "0.242", "7.225"],
    [5, "1.624", "11.668"],
    [10, "4.795", "18.390"],
    [20, "12.217", "30.888"],
  ];
  // Agreement to the printed digits: within one unit of the last one, since the table is recalled
  // from memory (5 → 1.624 is 1.6235 by the chi-square quantile, so one of the remembered digits is off by one).
  const half = (s: string) => (s.includes(".") ? 10 ** -s.split(".")[1].length : 0);
  for (const [y, lo, hi] of table) {
    const [l, h] = garwoodInterval(y, 0.95);
    assert.ok(Math.abs(l - Number(lo)) <= half(lo) + 1e-15, `lower for ${y}: ${l} against ${lo}`);
    assert.ok(Math.abs(h - Number(hi)) <= half(hi), `upper for ${y}: ${h} against ${hi}`);
  }
});

for (const [family, alpha] of [
  ["poisson", 0],
  ["negbin", 0.15],
] as const) {
  test(`coverage by simulation (seeded): new counts from a known ${family} model fall inside the 95% prediction interval 95% ± 2 points of the time`, () => {
    const u = rng(family === "poisson" ? 11 : 12);
    const { saved } = fitAndSave(simulate(u, 3000, alpha), family);
    const fresh = simulate(u, 600, alpha);
    const pr = predictCsv(saved, fresh, 200);
    const inside = pr.rows.filter(
      (r) => r.observed! >= r.prediction_interval[0] && r.observed! <= r.prediction_interval[1],
    ).length;
    const pct = (100 * inside) / pr.rows.length;
    assert.ok(Math.abs(pct - 95) <= 2, `coverage ${pct}%`);
  });
}

test("flags: data with no excess are flagged near the nominal 1%; an injected excess of 3× is flagged", () => {
  const u = rng(21);
  const { saved } = fitAndSave(simulate(u, 3000, 0), "poisson");
  const pr = predictCsv(saved, simulate(u, 1000, 0), 200);
  const [, hi] = binomialLimits(1000, 0.01);
  assert.ok(pr.n_flagged <= hi, `${pr.n_flagged} flagged of 1000 (at most ${hi} expected)`);
  // A clinic-week at 3× its rate: the count is three times the row's expected count.
  const base = predictCsv(saved, "unit,x,e\nu2,0.5,10\n", 200).rows[0].expected;
  const excess = `unit,x,e,y\nu2,0.5,10,${Math.round(3 * base)}\nu2,0.5,10,${Math.round(base)}\n`;
  const ex = predictCsv(saved, excess, 200);
  assert.equal(ex.rows[0].flagged, true, `3× the expected count is flagged (limit ${ex.rows[0].flag_limit})`);
  assert.equal(ex.rows[1].flagged, false);
  assert.ok(ex.rows[0].upper_tail_p! < 1e-6);
  const again = predictCsv(saved, excess, 200);
  assert.deepEqual(again, ex, "seeded draws repeat exactly");
});

function tmp(name: string, text: string): string {
  const f = join(mkdtempSync(join(tmpdir(), "tallyfit-")), name);
  writeFileSync(f, text);
  return f;
}

test("CLI: fit --save-model then predict, CSV by default with the input columns, --fail-on-flag gives exit 4", () => {
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-"));
  const model = join(dir, "model.json");
  const train = tmp("train.csv", simulate(rng(3), 500, 0));
  assert.equal(
    runCli(["fit", train, "--model", "y ~ unit + x", "--exposure", "e", "--save-model", model, "--intervals", "wald"])
      .code,
    0,
  );
  const saved = JSON.parse(readFileSync(model, "utf8"));
  assert.equal(saved.schema, "tallyfit.model/1");
  assert.match(saved.data.sha256, /^[0-9a-f]{64}$/);
  const fresh = tmp("new.csv", 'unit,x,e,y,note\nu1,0.2,10,41,a\nu3,0.9,8,200,"b, c"\nu2,0.1,12,,d\n');
  const r = runCli(["predict", "--model-file", model, fresh]);
  assert.equal(r.code, 0, r.stderr);
  const lines = r.stdout.trim().split("\n");
  assert.equal(
    lines[0],
    "unit,x,e,y,note,expected,expected_low,expected_high,predicted_low,predicted_high,upper_tail_p,flagged,prediction_note",
  );
  assert.match(lines[2], /^u3,0\.9,8,200,"b, c",[\d.]+,[\d.]+,[\d.]+,\d+,\d+,[\d.e-]+,true,$/);
  assert.match(
    lines[3],
    /^u2,0\.1,12,,d,[\d.]+,[\d.]+,[\d.]+,\d+,\d+,,false,$/,
    "a row without a count has no tail probability",
  );
  const j = JSON.parse(runCli(["predict", "--model-file", model, fresh, "--format", "json"]).stdout);
  assert.equal(j.schema, "tallyfit.predict/1");
  assert.deepEqual(Object.keys(j.rows[0]).slice(0, 7), [
    "row",
    "expected",
    "mean_ci",
    "prediction_interval",
    "observed",
    "upper_tail_p",
    "flag_limit",
  ]);
  assert.equal(j.rows[2].observed, null);
  assert.equal(j.rows[2].upper_tail_p, null);
  assert.equal(j.rows[0].row, 2, "row numbers count the header as row 1");
  assert.equal(runCli(["predict", "--model-file", model, fresh, "--fail-on-flag"]).code, 4);
});

test("CLI: predict input errors (unseen level, missing exposure, another schema) exit 2 with the row and what is known", () => {
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-"));
  const model = join(dir, "model.json");
  const train = tmp("train.csv", simulate(rng(3), 200, 0));
  runCli(["fit", train, "--model", "y ~ unit + x", "--exposure", "e", "--save-model", model, "--intervals", "wald"]);
  const unseen = runCli(["predict", "--model-file", model, tmp("n.csv", "unit,x,e\nu1,0.1,3\nu9,0.2,4\n")]);
  assert.equal(unseen.code, 2);
  assert.match(
    unseen.stderr,
    /row 3, column 'unit': level 'u9' was not in the data the model was fitted on.*The known levels are 'u1', 'u2', 'u3', 'u4'/,
  );
  const noexp = runCli(["predict", "--model-file", model, tmp("n.csv", "unit,x,e\nu1,0.1,\n")]);
  assert.equal(noexp.code, 2);
  assert.match(noexp.stderr, /row 2, column 'e': the value is missing/);
  const other = tmp("old.json", readFileSync(model, "utf8").replace("tallyfit.model/1", "tallyfit.model/0"));
  const bad = runCli(["predict", "--model-file", other, tmp("n.csv", "unit,x,e\nu1,0.1,3\n")]);
  assert.equal(bad.code, 2);
  assert.match(bad.stderr, /schema 'tallyfit.model\/0' is not the one this version reads/);
});

test("--summary-by: observed and expected totals by group with exact O/E limits and crude rates", () => {
  const train = tmp("train.csv", simulate(rng(4), 400, 0));
  const j = JSON.parse(
    runCli([
      "fit",
      train,
      "--model",
      "y ~ unit + x",
      "--exposure",
      "e",
      "--summary-by",
      "unit",
      "--per",
      "1000",
      "--format",
      "json",
      "--intervals",
      "wald",
    ]).stdout,
  );
  const g = j.summary_by;
  assert.equal(g.column, "unit");
  assert.deepEqual(
    g.groups.map((r: { group: string }) => r.group),
    ["u1", "u2", "u3", "u4"],
  );
  for (const r of g.groups) {
    // With a factor for the group in the model, the fitted totals equal the observed ones (a likelihood equation).
    assert.ok(Math.abs(r.expected - r.observed) < 1e-6 * r.observed);
    const [lo, hi] = garwoodInterval(r.observed, 0.95);
    assert.ok(Math.abs(r.ratio_ci[0] - lo / r.expected) < 1e-12 && Math.abs(r.ratio_ci[1] - hi / r.expected) < 1e-12);
    assert.ok(Math.abs(r.crude_rate - (r.observed / r.exposure) * 1000) < 1e-9);
  }
});
