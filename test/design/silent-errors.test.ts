// Results that used to be silently wrong now come with a notice or a refusal.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { runCli } from "../helpers.js";

const dir = mkdtempSync(join(tmpdir(), "tallyfit-silent-"));
const file = (name: string, content: string) => {
  const p = join(dir, name);
  writeFileSync(p, content);
  return p;
};

test("compare refuses models of different count columns", () => {
  const f = file("two.csv", "g,y,z\na,1,5\nb,2,7\na,3,4\nb,4,9\na,2,6\nb,5,8\n");
  const r = runCli(["compare", f, "--model", "y ~ g", "--model", "z ~ g"]);
  assert.equal(r.code, 2);
  assert.match(r.stderr, /compare needs the same count column in every model \(got 'y' and 'z'\)/);
});

test("fractional frequency weights and a numeric column turned categorical by one value get a notice", () => {
  const f = file("w.csv", "x,w,y\n1,1.5,3\n2,1,5\n3,2,2\n4,1,4\nInfinity,1,6\n6,1,3\n");
  const r = runCli(["fit", f, "--model", "y ~ x", "--weights", "w", "--intervals", "wald"]);
  assert.equal(r.code, 0, r.stderr);
  assert.match(r.stderr, /the weights column 'w' holds fractional values \(row 2: 1\.5\)/);
  assert.match(r.stderr, /'x' is read as categorical \(6 levels\) because row 6 holds 'Infinity'.*--factor x/);
});

test("a date column used as a term gets a message that says so; check refuses a model with no residual df", () => {
  let csv = "date,x,y\n";
  for (let d = 1; d <= 9; d++) csv += `2026-03-0${d},${d},${d % 4}\n`;
  const r = runCli(["fit", file("dates.csv", csv), "--model", "y ~ date + x"]);
  assert.equal(r.code, 2);
  assert.match(r.stderr, /'date' holds dates, read as a factor with one coefficient per date: a date is not a term/);
  const sat = file("sat.csv", "g,y\na,1\nb,2\nc,4\n");
  assert.equal(runCli(["fit", sat, "--model", "y ~ g", "--quiet"]).code, 0, "a saturated fit is allowed");
  const c = runCli(["check", sat, "--model", "y ~ g"]);
  assert.equal(c.code, 2);
  assert.match(c.stderr, /as many coefficients as rows, so no residual variation is left to check/);
});

test("counts beyond 1e15 are refused instead of overflowing into false statements", () => {
  const r = runCli(["fit", file("big.csv", "g,y\na,1e300\nb,2\na,3\nb,4\n"), "--model", "y ~ g"]);
  assert.equal(r.code, 2);
  assert.match(r.stderr, /the count is 1e\+300; counts must be whole numbers ≥ 0 and at most 1e\+15/);
});

test("a numeric term that separates zero from non-zero counts is named as separation, not blamed on a factor level", () => {
  // x is a 0/1 numeric column (not a factor): every row with x = 1 has a zero count.
  let csv = "x,z,y\n";
  for (let i = 0; i < 30; i++) csv += `${i % 2},${i % 5},${i % 2 ? 0 : 2 + (i % 4)}\n`;
  const r = runCli(["fit", file("sep.csv", csv), "--model", "y ~ x + z", "--intervals", "wald", "--max-iter", "200"]);
  const out = `${r.stdout}\n${r.stderr}`.replace(/\s+/g, " ");
  assert.match(out, /separation/);
});
