// Totals of NB2 counts (predict --flag-by): the recursion of negbin-sum.ts
// against a direct convolution of scipy.stats.nbinom probabilities with
// numpy.convolve (test/fixtures/scipy/negbin_sum_runner.py): every
// probability above 1e-12 of the largest to 1e-9 relative, the upper tails and the 0.99
// quantile; and Holm's and Benjamini–Hochberg's adjustments on a worked
// example from the papers' definitions.
import { test } from "node:test";
import assert from "node:assert/strict";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { benjaminiHochberg, holm } from "../../src/infer/multiplicity.js";
import { negbinSumPmf, negbinSumReach } from "../../src/infer/negbin-sum.js";
import { tableQuantile } from "../../src/infer/predictive.js";
import { FIXTURES, assertRel } from "../helpers.js";

const ref = JSON.parse(readFileSync(join(FIXTURES, "scipy", "negbin_sum_expected.json"), "utf8"));

for (const c of ref.cases)
  test(`NB2 total, ${c.name}: the recursion matches numpy's convolution of scipy's pmfs`, () => {
    assert.equal(negbinSumReach(c.mus, c.alpha), c.reach);
    const p = negbinSumPmf(c.mus, c.alpha, c.reach);
    let checked = 0;
    const top = Math.max(...c.pmf);
    c.pmf.forEach((want: number, k: number) => {
      if (want > 1e-12 * top) {
        assertRel(p[k], want, 1e-9, `P(T = ${k})`);
        checked++;
      }
    });
    assert.ok(checked > 3);
    for (const [t, want] of Object.entries(c.upper_tail)) {
      let tail = 0;
      for (let k = Number(t); k < p.length; k++) tail += p[k];
      assertRel(tail, want as number, 1e-8, `P(T ≥ ${t})`);
    }
    assert.equal(tableQuantile(p, 0.99), c["quantile_0.99"]);
  });

test("Holm and Benjamini–Hochberg adjusted p-values on a worked example from the definitions", () => {
  // Five tests, p = 0.010, 0.040, 0.030, 0.005, 0.200 (the fourth is the smallest).
  // Holm (1979): order p₍₁₎ = 0.005, 0.010, 0.030, 0.040, 0.200 and compare p₍ᵢ₎ with α/(m − i + 1):
  //   0.005 ≤ 0.05/5 = 0.010 reject; 0.010 ≤ 0.05/4 = 0.0125 reject; 0.030 > 0.05/3 stop.
  //   Adjusted: 5·0.005 = 0.025; max(0.025, 4·0.010 = 0.040) = 0.040; 3·0.030 = 0.090; max(0.09, 2·0.040) = 0.090; 0.200.
  const p = [0.01, 0.04, 0.03, 0.005, 0.2];
  const h = holm(p) as number[];
  [0.04, 0.09, 0.09, 0.025, 0.2].forEach((want, i) => assertRel(h[i], want, 1e-12, `Holm ${i}`));
  assert.deepEqual(
    h.map((x) => x <= 0.05),
    [true, false, false, true, false],
    "rejected at 0.05: the two Holm rejects",
  );
  // Benjamini and Hochberg (1995): the largest i with p₍ᵢ₎ ≤ i·α/m: 0.040 ≤ 4·0.05/5 = 0.040, so the first four are
  // rejected. Adjusted, from the top: 0.200; min(0.2, 5/4·0.040 = 0.05) = 0.05; min(0.05, 5/3·0.030 = 0.05) = 0.05;
  // min(0.05, 5/2·0.010 = 0.025) = 0.025; min(0.025, 5·0.005 = 0.025) = 0.025.
  const b = benjaminiHochberg(p) as number[];
  [0.025, 0.05, 0.05, 0.025, 0.2].forEach((want, i) => assertRel(b[i], want, 1e-12, `BH ${i}`));
  assert.deepEqual(
    b.map((x) => x <= 0.05 + 1e-15),
    [true, true, true, true, false],
  );
  // Missing p-values are not tests: they stay null and do not count in m.
  assert.deepEqual(holm([null, 0.02, null, 0.04]), [null, 0.04, null, 0.04]);
});
