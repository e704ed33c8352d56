// The per-count tables against the formulas they tabulate, evaluated directly
// with @stdlib's log-gamma (a general-purpose special-function library).
import { test } from "node:test";
import assert from "node:assert/strict";
import gammaln from "@stdlib/math-base-special-gammaln";
import { CountTable, countIndex, maxCount } from "../../src/fit/count-table.js";
import { assertRel } from "../helpers.js";

const y = Float64Array.from([0, 1, 2, 5, 17, 80, 300, 3]);

test("CountTable holds k·log k, the NB2 deviance terms, log-likelihood terms and harmonic sums of every count up to the largest", () => {
  const alpha = 0.37,
    r = 1 / alpha;
  const t = CountTable.of(y, alpha)!;
  assert.equal(t.top, 300);
  assert.deepEqual([...t.counts], [...y]);
  for (let k = 0; k <= 300; k++) {
    if (k > 0) assertRel(t.ylogy[k], k * Math.log(k), 1e-15, `k log k at ${k}`);
    assertRel(t.negbinDeviance[k], (k + r) * Math.log1p(alpha * k), 1e-14, `deviance term at ${k}`);
    const direct = gammaln(k + r) - gammaln(r) - gammaln(k + 1);
    assert.ok(Math.abs(t.logLikTerms[k] - direct) <= 1e-11 * (1 + Math.abs(direct)), `log-likelihood term at ${k}`);
    let d = 0,
      e = 0;
    for (let j = 0; j < k; j++) {
      d += 1 / (r + j);
      e += 1 / (r + j) ** 2;
    }
    assertRel(t.harmonic.d[k], d, 1e-12, `harmonic d at ${k}`);
    assertRel(t.harmonic.e[k], e, 1e-12, `harmonic e at ${k}`);
  }
  assert.equal(t.ylogy[0], 0);
});

test("the k·log k table is shared by every alpha of the same response; other tables belong to their alpha", () => {
  const a = CountTable.of(y, 0.5)!,
    b = CountTable.of(y, 2)!;
  assert.equal(a.ylogy, b.ylogy);
  assert.notEqual(a.negbinDeviance[5], b.negbinDeviance[5]);
});

test("counts that are not whole numbers cannot be tabulated", () => {
  const frac = Float64Array.from([0, 1.5, 2]);
  assert.equal(maxCount(frac), Infinity);
  assert.equal(countIndex(frac), null);
  assert.equal(CountTable.of(frac, 0.3), null);
});
