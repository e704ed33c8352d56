// Every kind of mistake: a short message naming file, row, column and value; exit code 2 (3 for fit failures); no stack trace.
import { test } from "node:test";
import assert from "node:assert/strict";
import { spawn } from "node:child_process";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { BIN, ROOT, runCli } from "../helpers.js";
import { CASES, firstLine, runCase } from "./error-cases.js";

for (const c of CASES) {
  test(`bad input: ${c.mistake} → exit ${c.code} with a clear message`, () => {
    const r = runCase(c);
    assert.equal(r.code, c.code, r.stderr);
    assert.match(firstLine(r.stderr), c.message);
    assert.doesNotMatch(r.stderr, /\n\s+at .+:\d+:\d+/, "no stack trace");
    assert.equal(r.stdout, "", "nothing on stdout");
  });
}

test("perfectly collinear predictors are reported as aliased, not as an error", () => {
  const r = runCli(
    ["fit", "-", "--model", "y ~ x + z", "--format", "json"],
    "x,z,y\n1,2,3\n2,4,1\n3,6,4\n4,8,2\n5,10,6\n",
  );
  assert.equal(r.code, 0, r.stderr);
  const z = JSON.parse(r.stdout).coefficients.find((c: { term: string }) => c.term === "z");
  assert.equal(z.aliased, true);
  assert.equal(z.estimate, null);
});

test("extreme magnitudes (counts near 1e12, exposures near 1e-12) give finite results", () => {
  let csv = "g,e,y\n";
  for (let i = 0; i < 40; i++)
    csv += `${i % 2 ? "a" : "b"},${1e-12 * (1 + (i % 3))},${Math.round(1e12 * (1 + (i % 5)) * (i % 2 ? 1 : 2))}\n`;
  const r = runCli(["fit", "-", "--model", "y ~ g", "--exposure", "e", "--format", "json"], csv);
  assert.equal(r.code, 0, r.stderr);
  const j = JSON.parse(r.stdout);
  for (const c of j.coefficients)
    assert.ok(Number.isFinite(c.estimate) && Number.isFinite(c.std_error) && Number.isFinite(c.profile[0]));
  assert.ok(Number.isFinite(j.log_likelihood) && Number.isFinite(j.deviance));
});

test("writing into a pipe that closes early (| head) ends quietly, without a stack trace", async () => {
  const child = spawn(
    process.execPath,
    [
      BIN,
      "fit",
      "examples/clinic_visits.csv",
      "--model",
      "visits ~ clinic + weekday",
      "--exposure",
      "open_hours",
      "--quiet",
    ],
    { cwd: ROOT, stdio: ["ignore", "pipe", "pipe"] },
  );
  let err = "";
  child.stderr.on("data", (d) => (err += d));
  child.stdout.once("data", () => child.stdout.destroy());
  const code = await new Promise<number | null>((res) => child.on("close", (c) => res(c)));
  assert.equal(code, 0);
  assert.equal(err, "");
});

test("an internal error says it is a bug and asks for a report; --debug adds the stack", () => {
  const r = runCli(["fit", "-", "--model", "y ~ g"], "g,y\na,1\nb,2\n", { TALLYFIT_TEST_CRASH: "1" });
  assert.equal(r.code, 1);
  assert.match(r.stderr, /internal error: .*This is a bug in tallyfit; please report it/s);
  assert.doesNotMatch(r.stderr, /\n\s+at /);
  const d = runCli(["fit", "-", "--model", "y ~ g", "--debug"], "g,y\na,1\nb,2\n", { TALLYFIT_TEST_CRASH: "1" });
  assert.match(d.stderr, /\n\s+at /);
});

test("reading from a pipe that closes early (a truncated extract) gives a clear input error, not a crash", () => {
  const whole = readFileSync(join(ROOT, "examples", "clinic_visits.csv"), "utf8");
  const cut = whole.slice(0, 1000 + whole.slice(1000).indexOf(",") + 1); // ends in the middle of a row
  const r = runCli(["fit", "-", "--model", "visits ~ clinic", "--exposure", "open_hours"], cut);
  assert.equal(r.code, 2);
  assert.match(r.stderr, /fields where the header has 8/);
  assert.doesNotMatch(r.stderr, /\n\s+at /);
});
