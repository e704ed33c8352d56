// The dispersion and zero-count check: size and power by simulation, verdicts, exit codes.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { analyzeCheck } from "../../src/analysis/check.js";
import { buildDesign } from "../../src/design/design.js";
import { parseTable } from "../../src/io/csv.js";
import { parseFormula } from "../../src/formula/formula.js";
import { binomialLimits, rng, runCli, simulateRates } from "../helpers.js";

const DISPERSION = ["pearson", "deviance", "cameron_trivedi", "dean_lawless", "lr_negbin"];

function check(csv: string) {
  const design = buildDesign(parseTable(csv, { source: "sim.csv" }), parseFormula("y ~ g + x"), { exposure: "e" });
  return analyzeCheck(design, { testLevel: 0.05 });
}

test("size by simulation (seeded): on 400 Poisson data sets (n = 400, means about 10 to 80) each dispersion test flags at 5% within binomial 99.9% limits", () => {
  const u = rng(20261202);
  const flags = Object.fromEntries(DISPERSION.map((k) => [k, 0]));
  for (let r = 0; r < 400; r++) {
    const res = check(simulateRates(u, 400, 0, 10));
    for (const t of res.tests) if (t.name in flags && t.flagged) flags[t.name]++;
  }
  const [lo, hi] = binomialLimits(400, 0.05);
  for (const k of DISPERSION)
    assert.ok(flags[k] >= lo && flags[k] <= hi, `${k} flagged ${flags[k]}/400, limits ${lo}–${hi}`);
});

test("power by simulation (seeded): on NB data with alpha 0.5 and n = 500 each dispersion test flags in at least 90% of data sets", () => {
  const u = rng(77);
  const flags = Object.fromEntries(DISPERSION.map((k) => [k, 0]));
  const reps = 100;
  for (let r = 0; r < reps; r++) {
    const res = check(simulateRates(u, 500, 0.5, 1));
    assert.equal(res.verdict.code === "poisson_adequate", false);
    for (const t of res.tests) if (t.name in flags && t.flagged) flags[t.name]++;
  }
  for (const k of DISPERSION) assert.ok(flags[k] >= 0.9 * reps, `${k} flagged ${flags[k]}/${reps}`);
});

test("zero-count check: structural zeros are flagged as more zeros than either model expects", () => {
  const u = rng(31);
  let csv = "g,x,e,y\n";
  const base = simulateRates(u, 600, 0, 4).trim().split("\n").slice(1);
  base.forEach((line, i) => {
    const [g, x, e] = line.split(",");
    csv += i % 4 === 0 ? `${g},${x},${e},0\n` : `${line}\n`;
  });
  const res = check(csv);
  const z = res.tests.find((t) => t.name === "zero_inflation")!;
  assert.ok(z.flagged, `zero test p = ${z.p_value}`);
  assert.ok(res.zeros.observed > res.zeros.expected_poisson * 3);
  assert.equal(res.verdict.code, "excess_zeros");
});

function writeTmp(name: string, text: string): string {
  const f = join(mkdtempSync(join(tmpdir(), "tallyfit-")), name);
  writeFileSync(f, text);
  return f;
}

test("CLI: check exits 0 on Poisson data and 4 on overdispersed data; JSON carries tests and verdict", () => {
  const pois = writeTmp("p.csv", simulateRates(rng(3), 300, 0, 3));
  const over = writeTmp("o.csv", simulateRates(rng(3), 300, 0.5, 3));
  const a = runCli(["check", pois, "--model", "y ~ g + x", "--exposure", "e"]);
  assert.equal(a.code, 0, a.stdout + a.stderr);
  assert.match(a.stdout, /The Poisson model is adequate/);
  const b = runCli(["check", over, "--model", "y ~ g + x", "--exposure", "e", "--format", "json"]);
  assert.equal(b.code, 4);
  const j = JSON.parse(b.stdout);
  assert.equal(j.schema, "tallyfit.check/1");
  assert.equal(j.check.verdict.code, "overdispersed");
  for (const t of j.check.tests)
    for (const k of ["name", "statistic", "df", "p_value", "flagged"]) assert.ok(k in t, k);
  assert.equal(runCli(["check", over, "--model", "y ~ g + x", "--exposure", "e", "--alpha", "2"]).code, 2);
});

test("CLI: --family auto picks the Poisson on Poisson data and the negative binomial on overdispersed data, and says why", () => {
  const pois = writeTmp("p.csv", simulateRates(rng(3), 300, 0, 3));
  const over = writeTmp("o.csv", simulateRates(rng(3), 300, 0.5, 3));
  const a = JSON.parse(
    runCli(["fit", pois, "--model", "y ~ g + x", "--exposure", "e", "--family", "auto", "--format", "json"]).stdout,
  );
  assert.equal(a.family, "poisson");
  assert.match(a.family_choice.reason, /no dispersion test flagged/);
  const b = runCli(["fit", over, "--model", "y ~ g + x", "--exposure", "e", "--family", "auto"]);
  assert.equal(b.code, 0);
  assert.match(b.stdout, /^Negative-binomial \(NB2\) rate model/);
  assert.match(b.stdout, /family +negbin \(--family auto\): the dispersion check flagged/);
});
