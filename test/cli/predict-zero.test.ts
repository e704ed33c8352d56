// fit --family zip|zinb|hurdle-* --save-model, then predict on new rows: the
// model file carries both parts and the joint covariance, and on new rows
// simulated from the true zero-inflated NB2 (seeded) the prediction intervals
// cover and the flags trip about as often as the model says.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { assertRel, binomialLimits, negbinDraw, rng, runCli, schemaValidator } from "../helpers.js";

const TRUE = { b0: Math.log(0.01), bSurgery: 0.4, g0: -1.2, gSmall: 1.5, alpha: 0.5 };

/** Ward-months from a zero-inflated NB2: falls per bed-day by ward type; small units more often report nothing. */
function simulate(u: () => number, n: number): string {
  let csv = "ward_type,small_unit,bed_days,falls\n";
  for (let i = 0; i < n; i++) {
    const surgery = u() < 0.5;
    const small = u() < 0.4;
    const bedDays = Math.round(200 + 600 * u());
    const pi = 1 / (1 + Math.exp(-(TRUE.g0 + (small ? TRUE.gSmall : 0))));
    const mu = bedDays * Math.exp(TRUE.b0 + (surgery ? TRUE.bSurgery : 0));
    const y = u() < pi ? 0 : negbinDraw(u, mu, TRUE.alpha);
    csv += `${surgery ? "surgery" : "medicine"},${small ? "yes" : "no"},${bedDays},${y}\n`;
  }
  return csv;
}

/** Fit a zero family to the rows with --save-model (zero part ~ small_unit); the run, the model file, the folder. */
function fitSaved(csv: string, family: string, extra: string[]) {
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-zpred-"));
  writeFileSync(join(dir, "train.csv"), csv);
  const model = join(dir, "m.json");
  const args = ["--model", "falls ~ ward_type", "--exposure", "bed_days", "--zero-terms", "small_unit"];
  const r = runCli(["fit", join(dir, "train.csv"), ...args, "--family", family, "--save-model", model, ...extra]);
  return { r, model, dir };
}

test("zinb --save-model: the model file holds the fit's estimates for both parts and alpha, and passes its schema", () => {
  const { r, model } = fitSaved(simulate(rng(71), 500), "zinb", ["--format", "json"]);
  assert.equal(r.code, 0, r.stderr);
  const fit = JSON.parse(r.stdout);
  const saved = JSON.parse(readFileSync(model, "utf8"));
  assert.ok(schemaValidator("model")(saved));
  assert.equal(saved.family, "zinb");
  saved.coefficients.forEach((c: { estimate: number }, k: number) =>
    assertRel(c.estimate, fit.coefficients[k].estimate, 1e-12, `count ${k}`),
  );
  saved.zero_part.coefficients.forEach((c: { estimate: number }, k: number) =>
    assertRel(c.estimate, fit.zero_part.coefficients[k].estimate, 1e-12, `zero ${k}`),
  );
  assertRel(saved.alpha, fit.negbin.alpha, 1e-12, "alpha");
  // The joint covariance's diagonal gives the report's standard errors (inverse observed information).
  const m = saved.covariance.matrix;
  fit.coefficients.forEach((c: { std_error: number }, k: number) =>
    assertRel(Math.sqrt(m[k][k]), c.std_error, 1e-9, `count SE ${k}`),
  );
  fit.zero_part.coefficients.forEach((c: { std_error: number }, k: number) =>
    assertRel(Math.sqrt(m[2 + k][2 + k]), c.std_error, 1e-9, `zero SE ${k}`),
  );
  assert.equal(saved.covariance.log_alpha, true);
  assert.equal(m.length, 5);
});

test("predict under a saved zinb fit on new rows from the true model: 90% prediction intervals cover at least 90% (they are conservative for counts) and the flags at 0.95 follow the model's chance (seeded)", () => {
  const { r: fit, model, dir } = fitSaved(simulate(rng(5), 800), "zinb", ["--intervals", "wald"]);
  writeFileSync(join(dir, "new.csv"), simulate(rng(6), 2000));
  assert.equal(fit.code, 0, fit.stderr);
  const r = runCli([
    "predict",
    "--model-file",
    model,
    join(dir, "new.csv"),
    "--level",
    "0.9",
    "--flag-level",
    "0.95",
    "--draws",
    "200",
    "--format",
    "json",
  ]);
  assert.equal(r.code, 0, r.stderr);
  const j = JSON.parse(r.stdout);
  assert.ok(schemaValidator("predict")(j));
  assert.equal(j.family, "zinb");
  assert.match(j.method, /zero-inflated NB2 distribution mixed over 200 joint draws/);
  const rows = j.rows as {
    observed: number;
    prediction_interval: [number, number];
    flagged: boolean;
    flag_chance: number;
  }[];
  const inside = rows.filter(
    (x) => x.observed >= x.prediction_interval[0] && x.observed <= x.prediction_interval[1],
  ).length;
  assert.ok(inside >= binomialLimits(rows.length, 0.9)[0], `${inside} of ${rows.length} inside the 90% interval`);
  // The number flagged is a sum of independent Bernoulli trials with the rows' flag chances (when the model holds).
  const chance = rows.reduce((a, x) => a + x.flag_chance, 0);
  const sd = Math.sqrt(rows.reduce((a, x) => a + x.flag_chance * (1 - x.flag_chance), 0));
  const flagged = rows.filter((x) => x.flagged).length;
  assert.ok(Math.abs(flagged - chance) < 4 * sd + 2, `${flagged} flagged, ${chance.toFixed(1)} expected by chance`);
  assert.ok(chance < 0.05 * rows.length && chance > 0.01 * rows.length, `chance ${chance}`);
});

test("predict --flag-by under a hurdle model groups the rows, and --summary-by is refused with the way to group (exit 2)", () => {
  const { r: fit, model, dir } = fitSaved(simulate(rng(9), 400), "hurdle-negbin", []);
  assert.equal(fit.code, 0, fit.stderr);
  const r = runCli([
    "predict",
    "--model-file",
    model,
    join(dir, "train.csv"),
    "--flag-by",
    "ward_type",
    "--format",
    "json",
  ]);
  assert.equal(r.code, 0, r.stderr);
  const j = JSON.parse(r.stdout);
  assert.deepEqual(
    j.groups.map((g: { group: string }) => g.group),
    ["surgery", "medicine"].filter((t) => j.groups.some((g: { group: string }) => g.group === t)),
  );
  assert.match(j.group_method, /sum of hurdle NB2 counts/);
  for (const g of j.groups as { observed: number; expected: number; prediction_interval: [number, number] }[]) {
    // On the rows it was fitted to, a hurdle model's expected total equals the observed (its score equations).
    assertRel(g.expected, g.observed, 0.02, "hurdle total");
    assert.ok(g.prediction_interval[0] <= g.observed && g.observed <= g.prediction_interval[1]);
  }
  const refused = runCli([
    "predict",
    "--model-file",
    model,
    join(dir, "train.csv"),
    "--summary-by",
    "ward_type",
    "--format",
    "text",
  ]);
  assert.equal(refused.code, 2);
  assert.match(refused.stderr, /--summary-by does not go with the hurdle-negbin model yet.*--flag-by ward_type/);
});
