// The README's error table is the one the code prints: regenerated from the
// bad-input cases (error-cases.ts) by running each through the CLI, and the
// documented limits are the ones in the code.
import { test } from "node:test";
import assert from "node:assert/strict";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { PREDICT_MAX_DRAWS } from "../../src/cli/commands/predict.js";
import { DESIGN_LIMITS } from "../../src/design/design.js";
import { FORMULA_LIMITS } from "../../src/formula/formula.js";
import { READER_LIMITS } from "../../src/io/text-kind.js";
import { ROOT } from "../helpers.js";
import { CASES, firstLine, runCase } from "./error-cases.js";

const readme = readFileSync(join(ROOT, "README.md"), "utf8");

test("the README's error table equals the messages the CLI prints for every case", () => {
  const rows = CASES.map((c) => {
    const r = runCase(c);
    return `| ${c.mistake} | \`${firstLine(r.stderr).replace(/\|/g, "\\|").replace(/`/g, "'")}\` | ${r.code} |`;
  });
  const table = ["| mistake | first line of the message | exit |", "|---|---|---|", ...rows].join("\n");
  assert.ok(
    readme.includes(table),
    "README table differs: regenerate it with node dist/test/cli/error-cases.js --markdown",
  );
});

test("the README states each limit with the value the code uses", () => {
  const n = (x: number) => x.toLocaleString("en");
  for (const phrase of [
    `a model string of at most ${n(FORMULA_LIMITS.length)} characters`,
    `parentheses nested at most ${FORMULA_LIMITS.nesting} deep`,
    `at most ${n(FORMULA_LIMITS.terms)} terms`,
    `at most ${n(DESIGN_LIMITS.columns)} coefficients`,
    `at most ${n(READER_LIMITS.columns)} columns in a header`,
    `lines of at most ${READER_LIMITS.lineBytes / 1e6} MB`,
    `\`--draws\` at most ${n(PREDICT_MAX_DRAWS)}`,
    `counts and frequency weights at most ${DESIGN_LIMITS.count.toExponential(0).replace("+", "")}`,
  ])
    assert.ok(readme.includes(phrase), phrase);
});
