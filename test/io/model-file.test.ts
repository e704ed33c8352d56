// An edited or damaged model file is refused with the field that is wrong
// (checked against schemas/model-1.schema.json and for internal consistency),
// never read as 0 or null.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { ROOT, runCli } from "../helpers.js";

const dir = mkdtempSync(join(tmpdir(), "tallyfit-modelfile-"));
const good = JSON.parse(readFileSync(join(ROOT, "test/fixtures/golden/model-negbin.json"), "utf8"));

// biome-ignore lint/suspicious/noExplicitAny: the tests edit arbitrary fields of a parsed JSON file
type Json = any;
const edits: [string, (m: Json) => void, RegExp][] = [
  [
    "an estimate written as text",
    (m) => (m.coefficients[2].estimate = "0.5"),
    /\/coefficients\/2\/estimate must be number/,
  ],
  [
    "an estimated coefficient without a value",
    (m) => (m.coefficients[1].estimate = null),
    /is estimated but its estimate is not a number/,
  ],
  ["a covariance of the wrong size", (m) => m.covariance.matrix.pop(), /\/covariance\/matrix is not 13 × 13/],
  ["no exposure field", (m) => delete m.exposure, /must have required property 'exposure'/],
  ["an unknown family", (m) => (m.family = "gamma"), /\/family must be equal to one of the allowed values/],
  ["a negative binomial without alpha", (m) => (m.alpha = null), /\/alpha must be a number ≥ 0/],
  [
    "a reference that is not a level",
    (m) => (m.factors[0].reference = "nowhere"),
    /the reference 'nowhere' is not a level/,
  ],
  ["a negative variance", (m) => (m.covariance.matrix[0][0] = -1), /variance that is not positive \(row 1\)/],
];

for (const [what, edit, message] of edits)
  test(`model file with ${what}: exit 2 naming the field`, () => {
    const m = JSON.parse(JSON.stringify(good));
    edit(m);
    const path = join(dir, "m.json");
    writeFileSync(path, JSON.stringify(m));
    const r = runCli(["predict", "--model-file", path, "examples/clinic_visits_week49.csv"]);
    assert.equal(r.code, 2, r.stderr);
    assert.match(r.stderr, /the model file is damaged: /);
    assert.match(r.stderr, message);
  });

test("the unedited model file passes the same checks", () => {
  const r = runCli([
    "predict",
    "--model-file",
    join(ROOT, "test/fixtures/golden/model-negbin.json"),
    "examples/clinic_visits_week49.csv",
    "--draws",
    "200",
    "--quiet",
  ]);
  assert.equal(r.code, 0, r.stderr);
});
