// check --cluster (clustered counts): the dependence reading against the
// scipy/numpy computation of gee_runner.py (ICC of the NB2 Pearson
// residuals, its F test and F-based interval with scipy.stats.f, the
// within-cluster lag-1 correlation and its z), to 1e-6; and by seeded
// simulation, that the reading flags clustered data and stays quiet, at
// its nominal size, on independent data.
import { test } from "node:test";
import assert from "node:assert/strict";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { analyzeCheckWithFits } from "../../src/analysis/check.js";
import { clusteringOf, orderKeyOf } from "../../src/design/clusters.js";
import { buildDesign } from "../../src/design/design.js";
import { parseFormula } from "../../src/formula/formula.js";
import { parseTable } from "../../src/io/csv.js";
import { columnLabels } from "../../src/io/table.js";
import { FIXTURES, assertRel, binomialLimits, normalDraw, poissonDraw, rng, runCli } from "../helpers.js";

const ref = JSON.parse(readFileSync(join(FIXTURES, "scipy", "gee_expected.json"), "utf8"));
const DATA = join(FIXTURES, "scipy", ref.data);

test("check --cluster clinic --order-by day: ICC, its interval and F test, and the lag-1 reading match scipy (1e-6); exit 4", () => {
  const r = runCli([
    "check",
    DATA,
    "--model",
    ref.model,
    "--exposure",
    ref.exposure,
    "--cluster",
    "clinic",
    "--order-by",
    "day",
    "--format",
    "json",
    "--tolerance",
    "1e-13",
  ]);
  assert.equal(r.code, 4, r.stderr);
  const d = JSON.parse(r.stdout).check.dependence;
  const want = ref.dependence;
  assertRel(d.icc.estimate, want.icc, 1e-6, "ICC");
  assertRel(d.icc.ci[0], want.icc_ci[0], 1e-6, "ICC lower");
  assertRel(d.icc.ci[1], want.icc_ci[1], 1e-6, "ICC upper");
  assertRel(d.icc.f, want.f, 1e-6, "F");
  assert.equal(d.icc.df1, want.df1);
  assert.equal(d.icc.df2, want.df2);
  assert.ok(d.icc.p_value < 1e-12 && want.f_p_value < 1e-12, "F test far in the tail");
  assertRel(d.serial.estimate, want.serial, 1e-6, "lag-1");
  assertRel(d.serial.null_mean, want.serial_null_mean, 1e-12, "null mean");
  assertRel(d.serial.z, want.serial_z, 1e-6, "z");
  assertRel(d.serial.p_value, want.serial_p_value, 1e-5, "one-sided p");
  assert.ok(d.icc.flagged && d.serial.flagged);
  assert.match(d.reading, /use --cluster clinic/);
});

/** Clinic-days: G clinics × n days, a clinic effect (sd `between`) and an AR(1) day effect (coefficient `ar`). */
function simulate(seed: number, G: number, n: number, between: number, ar: number) {
  const u = rng(seed);
  const lines = ["clinic,day,x,hours,visits"];
  for (let g = 0; g < G; g++) {
    const b = between * normalDraw(u);
    let shock = 0;
    for (let d = 0; d < n; d++) {
      shock = ar * shock + (ar > 0 ? 0.3 * normalDraw(u) : 0);
      const x = Math.round(u() * 300) / 100;
      const hours = 4 + Math.floor(u() * 7);
      lines.push(`c${g},${d},${x},${hours},${poissonDraw(u, hours * Math.exp(-0.8 + 0.2 * x + b + shock))}`);
    }
  }
  const table = parseTable(Buffer.from(`${lines.join("\n")}\n`), { source: "sim.csv" });
  const design = buildDesign(table, parseFormula("visits ~ x"), { exposure: "hours" });
  const cluster = clusteringOf("clinic", columnLabels(table, "clinic", design.rowIndex));
  const key = orderKeyOf("day", columnLabels(table, "day", design.rowIndex), design.rowIndex, cluster, "sim.csv");
  return analyzeCheckWithFits(design, { testLevel: 0.05, cluster, orderBy: { column: "day", key } }).check;
}

test("on independent counts the dependence reading flags at about its nominal 5% (300 seeded data sets, binomial 99.9% limits)", () => {
  const runs = 300;
  let icc = 0,
    serial = 0;
  for (let s = 0; s < runs; s++) {
    const d = simulate(1000 + s, 30, 20, 0, 0).dependence!;
    if (d.icc.flagged) icc++;
    if (d.serial?.flagged) serial++;
  }
  const [lo, hi] = binomialLimits(runs, 0.05);
  assert.ok(icc >= lo && icc <= hi, `ICC flags ${icc} of ${runs}, limits ${lo}–${hi}`);
  assert.ok(serial >= lo && serial <= hi, `lag-1 flags ${serial} of ${runs}, limits ${lo}–${hi}`);
});

test("with a clinic effect and week-to-week shocks the reading flags both, in nearly every data set", () => {
  let icc = 0,
    serial = 0;
  const runs = 40;
  for (let s = 0; s < runs; s++) {
    const check = simulate(5000 + s, 30, 20, 0.3, 0.7);
    if (check.dependence!.icc.flagged) icc++;
    if (check.dependence!.serial?.flagged) serial++;
    assert.ok(check.flagged || !check.dependence!.icc.flagged, "a dependence flag sets the check's flag");
  }
  assert.ok(icc >= 38, `ICC flagged ${icc} of ${runs}`);
  assert.ok(serial >= 36, `lag-1 flagged ${serial} of ${runs}`);
});
