// O/E limits that follow the fitted family, checked by seeded simulation:
// clinic-weeks of seven clinic-days with different expected counts.
import { test } from "node:test";
import assert from "node:assert/strict";
import { garwoodInterval } from "../../src/infer/garwood.js";
import { ratioLimits } from "../../src/infer/ratio-limits.js";
import { negbinDraw, poissonDraw, rng } from "../helpers.js";

const RUNS = 2000;

function coverage(
  draw: (u: () => number, mu: number) => number,
  spread: Parameters<typeof ratioLimits>[3],
  seed: number,
): number {
  const u = rng(seed);
  let covered = 0;
  for (let r = 0; r < RUNS; r++) {
    let o = 0,
      e = 0,
      e2 = 0;
    for (let d = 0; d < 7; d++) {
      const mu = 3 + 17 * u();
      o += draw(u, mu);
      e += mu;
      e2 += mu * mu;
    }
    const [lo, hi] = ratioLimits(o, e, e2, spread, 0.95);
    if (lo <= 1 && 1 <= hi) covered++;
  }
  return covered / RUNS;
}

test(`NB2 data (alpha 0.3): the NB2-sum 95% O/E limits cover the true ratio in 93–97% of ${RUNS} clinic-weeks, Poisson-width limits far less`, () => {
  const nb = (u: () => number, mu: number) => negbinDraw(u, mu, 0.3);
  const withNb = coverage(nb, { family: "negbin", alpha: 0.3 }, 11);
  const withPoisson = coverage(nb, { family: "poisson" }, 11);
  assert.ok(withNb >= 0.93 && withNb <= 0.97, `NB2-sum limits cover ${withNb}`);
  assert.ok(withPoisson < 0.75, `Poisson-width limits cover only ${withPoisson}`);
});

test("quasi-Poisson data with phi = 3: the scaled limits cover in 93–97.5%", () => {
  // A count with variance 3·mu: 3 × Poisson(mu/3) (the variance of phi times a Poisson with mean mu/phi).
  const scaled = (u: () => number, mu: number) => 3 * poissonDraw(u, mu / 3);
  const cov = coverage(scaled, { family: "quasipoisson", phi: 3 }, 12);
  assert.ok(cov >= 0.93 && cov <= 0.975, `scaled limits cover ${cov}`);
});

test("Poisson data: the exact Poisson limits, as before (Garwood), cover at least 95%", () => {
  const cov = coverage(poissonDraw, { family: "poisson" }, 13);
  assert.ok(cov >= 0.95 && cov <= 0.985, `exact limits cover ${cov}`);
  const [lo, hi] = ratioLimits(40, 32, 200, { family: "poisson" }, 0.95);
  const [glo, ghi] = garwoodInterval(40, 0.95);
  assert.equal(lo, glo / 32);
  assert.equal(hi, ghi / 32);
});

test("an NB2 group of one row gets the limits that invert that row's own NB2 distribution", () => {
  // With one row the matched negative binomial is exact: check the tails at the limits directly.
  const [lo, hi] = ratioLimits(12, 5, 25, { family: "negbin", alpha: 0.5 }, 0.9);
  assert.ok(lo > 0 && lo < 12 / 5 && hi > 12 / 5);
  assert.equal(ratioLimits(0, 5, 25, { family: "negbin", alpha: 0.5 }, 0.9)[0], 0);
});
