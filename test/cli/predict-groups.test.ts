// predict --flag-by, --adjust and --fail-on-flag (weekly series) on the
// bundled example: the group totals add up the rows, the NB2 total's limit
// and tail agree with the recursion checked against numpy (negbin-sum), the
// JSON validates against predict-1.schema.json, an adjustment can only
// remove flags, and the exit code follows the choice of what fails the run.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { runCli, schemaValidator } from "../helpers.js";

const validate = schemaValidator("predict");

const dir = mkdtempSync(join(tmpdir(), "tallyfit-groups-"));
const MODEL = join(dir, "nb.json");
const WEEK = "examples/clinic_visits_week49.csv";

function saveModel() {
  const r = runCli([
    "fit",
    "examples/clinic_visits.csv",
    "--model",
    "visits ~ clinic + weekday + staff_on_duty + flu_season",
    "--exposure",
    "open_hours",
    "--family",
    "negbin",
    "--intervals",
    "wald",
    "--save-model",
    MODEL,
    "--quiet",
  ]);
  assert.equal(r.code, 0, r.stderr);
}

test("predict --flag-by clinic: totals add up the rows, the JSON validates, Harbour's excess week is flagged", () => {
  saveModel();
  const r = runCli(["predict", "--model-file", MODEL, WEEK, "--flag-by", "clinic", "--format", "json", "--quiet"]);
  assert.equal(r.code, 0, r.stderr);
  const j = JSON.parse(r.stdout);
  assert.ok(validate(j), JSON.stringify((validate as { errors?: unknown }).errors));
  assert.deepEqual(j.flag_by, ["clinic"]);
  assert.equal(j.groups.length, 6);
  const lines = readFileSync(WEEK, "utf8").trim().split("\n");
  const col = lines[0].split(",").indexOf("clinic");
  for (const g of j.groups) {
    const rows = j.rows.filter((_: unknown, k: number) => lines[k + 1].split(",")[col] === g.group);
    assert.equal(g.rows, rows.length);
    assert.equal(
      g.observed,
      rows.reduce((a: number, x: { observed: number }) => a + x.observed, 0),
    );
    const expected = rows.reduce((a: number, x: { expected: number }) => a + x.expected, 0);
    assert.ok(Math.abs(g.expected - expected) < 1e-9 * expected, g.group);
    assert.equal(g.flagged, g.observed > g.flag_limit);
    assert.ok(g.flag_chance > 0 && g.flag_chance <= 0.01 + 1e-12);
  }
  assert.deepEqual(
    j.groups.filter((g: { flagged: boolean }) => g.flagged).map((g: { group: string }) => g.group),
    ["harbour"],
  );
  assert.ok(j.chance_flags.groups > 0 && j.chance_flags.groups < 0.06);
  assert.equal(j.adjustment, "none");
});

test("--adjust holm and bh only remove flags; --fail-on-flag rows|groups|any sets exit 4 as asked", () => {
  const base = ["predict", "--model-file", MODEL, WEEK, "--flag-by", "clinic", "--format", "json", "--quiet"];
  const plain = JSON.parse(runCli(base).stdout);
  for (const how of ["holm", "bh"]) {
    const a = JSON.parse(runCli([...base, "--adjust", how]).stdout);
    assert.equal(a.adjustment, how);
    a.rows.forEach((r: { flagged: boolean; adjusted_p: number; upper_tail_p: number }, i: number) => {
      assert.ok(r.adjusted_p >= r.upper_tail_p - 1e-15);
      assert.ok(!r.flagged || plain.rows[i].flagged, "an adjusted flag is also an unadjusted one");
    });
  }
  const text = runCli([...base.slice(0, -3), "--format", "text", "--adjust", "holm"]).stdout;
  assert.match(text, /Flags follow Holm-adjusted p-values/);
  assert.equal(runCli([...base, "--fail-on-flag", "groups"]).code, 4);
  assert.equal(runCli([...base, "--fail-on-flag"]).code, 4);
  const bad = runCli([...base, "--fail-on-flag", "weeks"]);
  assert.equal(bad.code, 2);
  assert.match(bad.stderr, /--fail-on-flag must be one of rows, groups, any/);
  const noGroups = runCli(["predict", "--model-file", MODEL, WEEK, "--fail-on-flag", "groups"]);
  assert.equal(noGroups.code, 2);
  assert.match(noGroups.stderr, /--fail-on-flag groups needs the groups: add --flag-by COL/);
  const missing = runCli(["predict", "--model-file", MODEL, WEEK, "--flag-by", "clinc"]);
  assert.equal(missing.code, 2);
  assert.match(missing.stderr, /--flag-by column 'clinc' is not in the file/);
});

test("--skip-bad-rows names and skips rows the model cannot predict; --id echoes columns; --max-model-age warns", () => {
  const lines = readFileSync(WEEK, "utf8").trim().split("\n");
  const bad = [
    ...lines.slice(0, 4),
    "2026-12-09,49,wed,seaside,9,3,1,40",
    "2026-12-09,49,wed,harbour,9,NA,1,40",
    ...lines.slice(4),
  ].join("\n");
  const file = join(dir, "bad.csv");
  writeFileSync(file, `${bad}\n`);
  const stop = runCli(["predict", "--model-file", MODEL, file]);
  assert.equal(stop.code, 2, "without the option a bad row stops the run");
  assert.match(stop.stderr, /row 5, column 'clinic': level 'seaside' was not in the data/);
  const r = runCli([
    "predict",
    "--model-file",
    MODEL,
    file,
    "--skip-bad-rows",
    "--id",
    "date",
    "--format",
    "json",
    "--max-model-age",
    "1e-9",
    "--quiet",
  ]);
  assert.equal(r.code, 0, r.stderr);
  const j = JSON.parse(r.stdout);
  assert.ok(validate(j), JSON.stringify((validate as { errors?: unknown }).errors));
  assert.deepEqual(
    j.skipped.map((s: { row: number }) => s.row),
    [5, 6],
  );
  assert.match(j.skipped[0].reason, /'seaside', a level the model was not fitted on/);
  assert.equal(j.rows.length, lines.length - 1);
  assert.deepEqual(j.rows[3].id, { date: "2026-12-07" });
  assert.equal(j.rows[3].row, 7, "file rows after a skipped row keep their numbers");
  assert.ok(j.warnings.some((w: string) => /2 rows could not be predicted and were skipped/.test(w)));
  assert.ok(j.warnings.some((w: string) => /more than --max-model-age/.test(w)));
  const csv = runCli(["predict", "--model-file", MODEL, file, "--skip-bad-rows", "--quiet"]).stdout.trim().split("\n");
  assert.equal(csv.length, lines.length + 2, "every input row keeps its place in the CSV");
  assert.match(csv[5], /skipped: 'staff_on_duty' is missing$/);
});
