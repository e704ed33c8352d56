// Outputs and pipes (hardening): a closed pipe keeps the exit code the run
// earned, a full disk on stdout is an error, the input file and a file named
// twice are refused, a run's files are written all or nothing, a device is
// written in place, and a closed stderr never stops the work.
import { test } from "node:test";
import assert from "node:assert/strict";
import { spawnSync } from "node:child_process";
import { existsSync, lstatSync, mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { BIN, ROOT, runCli } from "../helpers.js";

const dir = mkdtempSync(join(tmpdir(), "tallyfit-outputs-"));
const MODEL = join(ROOT, "test/fixtures/golden/model-negbin.json");
const WEEK = join(ROOT, "examples/clinic_visits_week49.csv");
const WARDS = ["--model", "falls ~ ward", "--exposure", "bed_days", "--intervals", "wald"];
const WARDS_SH = `--model "falls ~ ward" --exposure bed_days --intervals wald`;

function bash(script: string) {
  return spawnSync("bash", ["-c", script], { encoding: "utf8", cwd: ROOT, env: { ...process.env, NO_COLOR: "1" } });
}

test("a reader that closes the pipe early (| head) does not change the exit code: --fail-on-flag still exits 4", () => {
  const r = bash(
    `node ${BIN} predict --model-file ${MODEL} ${WEEK} --draws 300 --fail-on-flag --quiet | head -1 >/dev/null; echo "code \${PIPESTATUS[0]}"`,
  );
  assert.match(r.stdout, /code 4/);
  const ok = bash(
    `node ${BIN} predict --model-file ${MODEL} ${WEEK} --draws 300 --quiet | head -1 >/dev/null; echo "code \${PIPESTATUS[0]}"`,
  );
  assert.match(ok.stdout, /code 0/);
});

test("stdout on a full disk is an error with a non-zero exit, not a silent 0", () => {
  const r = bash(`node ${BIN} predict --model-file ${MODEL} ${WEEK} --draws 300 --quiet > /dev/full; echo "code $?"`);
  assert.match(r.stdout, /code 2/);
  assert.match(r.stderr, /cannot write the output to standard output \(the disk is full\)/);
});

test("--output onto the input file, and two options naming one file, are refused before any work", () => {
  const input = join(dir, "wards.csv");
  writeFileSync(input, readFileSync(join(ROOT, "examples/ward_falls.csv")));
  const before = readFileSync(input, "utf8");
  const r = runCli(["fit", input, ...WARDS, "--output", input]);
  assert.equal(r.code, 2);
  assert.match(r.stderr, /--output .* is the input file/);
  assert.equal(readFileSync(input, "utf8"), before, "the data are untouched");
  const same = runCli([
    "fit",
    input,
    ...WARDS,
    "--output",
    join(dir, "r.json"),
    "--save-model",
    join(dir, ".", "r.json"),
  ]);
  assert.equal(same.code, 2);
  assert.match(same.stderr, /--save-model and --output name the same file/);
});

test("a run's files are all or nothing: when the picture cannot be written, the earlier model file is unchanged", () => {
  const input = join(ROOT, "examples/ward_falls.csv");
  const model = join(dir, "model.json");
  assert.equal(runCli(["fit", input, ...WARDS, "--save-model", model, "--quiet"]).code, 0);
  const before = readFileSync(model, "utf8");
  const r = runCli([
    "fit",
    input,
    "--model",
    "falls ~ ward + staffing_ratio",
    "--exposure",
    "bed_days",
    "--save-model",
    model,
    "--plot",
    join(dir, "no-such-folder", "p.svg"),
  ]);
  assert.equal(r.code, 2);
  assert.match(r.stderr, /no output of this run was written/);
  assert.equal(readFileSync(model, "utf8"), before);
});

test("--output /dev/stdout writes in place (the device is not replaced); a closed stderr does not stop a run", () => {
  const r = bash(
    `node ${BIN} fit examples/ward_falls.csv ${WARDS_SH} --format csv --quiet --output /dev/stdout | head -1`,
  );
  assert.match(r.stdout, /^term,estimate,std_error/);
  assert.ok(lstatSync("/dev/stdout").isSymbolicLink() || !lstatSync("/dev/stdout").isFile());
  const out = join(dir, "closed-stderr.json");
  const c = bash(
    `node ${BIN} fit examples/ward_falls.csv ${WARDS_SH} --format json --output ${out} 2>&-; echo "code $?"`,
  );
  assert.match(c.stdout, /code 0/);
  assert.ok(existsSync(out));
});

test("predict's CSV repeats the input rows from the same reader that computes the predictions (a stray carriage return cannot shift rows)", () => {
  const train = join(dir, "train-cr.csv");
  let csv = "unit,e,y\n";
  for (let i = 0; i < 40; i++) csv += `u${i % 4},${1 + (i % 3)},${(i * 7) % 6}\n`;
  writeFileSync(train, csv);
  const model = join(dir, "cr.json");
  assert.equal(
    runCli(["fit", train, "--model", "y ~ unit", "--exposure", "e", "--save-model", model, "--quiet"]).code,
    0,
  );
  // A bare carriage return inside the second row, then rows whose expected counts differ by unit.
  const fresh = join(dir, "new-cr.csv");
  writeFileSync(fresh, "unit,e,y,note\nu0,1,2,plain\nu1,2,3,a\rb\nu2,3,1,x\nu3,1,9,y\n");
  const csvOut = runCli(["predict", "--model-file", model, fresh, "--quiet"]);
  const jsonOut = runCli(["predict", "--model-file", model, fresh, "--format", "json", "--quiet"]);
  assert.equal(csvOut.code, jsonOut.code);
  if (csvOut.code !== 0) return; // a located input error in both is also consistent
  const rows = JSON.parse(jsonOut.stdout).rows as { row: number; expected: number }[];
  const lines = csvOut.stdout.trim().split("\n").slice(1);
  assert.equal(lines.length, rows.length);
  lines.forEach((line, k) => assert.ok(line.includes(String(rows[k].expected)), `row ${rows[k].row}: ${line}`));
});
