// The model string: Wilkinson–Rogers operators +, :, * and error carets.
import { test } from "node:test";
import assert from "node:assert/strict";
import { parseFormula } from "../../src/formula/formula.js";
import { InputError } from "../../src/errors.js";

const terms = (s: string) => parseFormula(s).terms.map((t) => t.variables.join(":"));

test("a*b expands to a + b + a:b; terms are ordered by degree", () => {
  assert.deepEqual(terms("y ~ a*b"), ["a", "b", "a:b"]);
  assert.deepEqual(terms("y ~ a:b + c"), ["c", "a:b"]);
  assert.deepEqual(terms("y ~ a*b*c"), ["a", "b", "c", "a:b", "a:c", "b:c", "a:b:c"]);
  assert.deepEqual(terms("y ~ (a + b):c"), ["a:c", "b:c"]);
  assert.deepEqual(
    terms("y ~ a + a + b:a"),
    ["a", "b:a"].map((t) => t),
    "duplicates collapse; written order kept",
  );
  assert.deepEqual(terms("y ~ 1"), []);
  assert.deepEqual(terms("y ~ `open hours` + b"), ["open hours", "b"]);
});

test("--no-intercept is carried on the spec", () => {
  assert.equal(parseFormula("y ~ a").intercept, true);
  assert.equal(parseFormula("y ~ a", { intercept: false }).intercept, false);
});

test("syntax errors show the string with a caret under the fault", () => {
  const caret = (s: string) => {
    try {
      parseFormula(s);
    } catch (e) {
      assert.ok(e instanceof InputError);
      const lines = e.message.split("\n");
      return lines[2].indexOf("^") - 2;
    }
    throw new Error("no error");
  };
  assert.equal(caret("y ~ a + "), 8);
  assert.equal(caret("y ~ a + log(b)"), 11);
  assert.equal(caret("y ~ a - b"), 6);
  assert.equal(caret("y a + b"), 2);
  assert.equal(caret("y ~ (a + b"), 10);
  assert.equal(caret("y ~ a b"), 6);
  assert.throws(() => parseFormula("y ~ a + y"), /also appears among the terms/);
});
