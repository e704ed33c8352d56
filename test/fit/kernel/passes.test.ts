// The passes written out for the common case against the general loops they
// stand in for: the same operations in the same order, so the same bits. The
// predict passes compute eta in their own loop for at most two numeric slots
// (against linearPredictorCells, and with prior weights of exactly 1, w·x = x);
// the working cell sums run a loop per slot count without prior weights
// (against the general loop over stored weights and responses).
import { test } from "node:test";
import assert from "node:assert/strict";
import { CountTable } from "../../../src/fit/count-table.js";
import { cellSums } from "../../../src/fit/kernel/cross-products.js";
import {
  alphaSumsAt,
  linearPredictorCells,
  predictCellsNegbin,
  predictCellsPoisson,
} from "../../../src/fit/kernel/passes.js";
import { cellsOf, prepareFit, slotValuesOf } from "../../../src/fit/kernel/setup.js";
import { fitCsv, rng, simulateRates } from "../../helpers.js";

const bits = (a: Float64Array) => Buffer.from(a.buffer, a.byteOffset, a.byteLength).toString("hex");
const csv = simulateRates(rng(8), 3000, 0.4);

for (const [model, slots] of [
  ["y ~ g", 0],
  ["y ~ g + x", 1],
  ["y ~ g * x", 2],
] as const) {
  const { design } = fitCsv(csv, model, { exposure: "e" });
  const setup = prepareFit(design.matrix, design);
  const L = cellsOf(design.matrix, setup)!;
  const vals = slotValuesOf(design.matrix, setup);
  const n = design.n;
  const betaS = Float64Array.from({ length: setup.order.length }, (_, k) => 0.3 - 0.1 * k);
  const ones = new Float64Array(n).fill(1);

  test(`${model}: ${slots} numeric slots, the predict passes' eta, mu, deviance and alpha sums are the general loops' to the last bit`, () => {
    assert.equal(L.numeric.length, slots);
    const written = new Float64Array(n);
    linearPredictorCells(L, vals, betaS, design.offset, written);
    for (const alpha of [0, 0.4]) {
      const table = CountTable.of(design.y, alpha)!;
      const run = (pw: Float64Array | null) => {
        const eta = new Float64Array(n),
          mu = new Float64Array(n);
        const sums = alphaSumsAt(table, alpha, true);
        const d =
          alpha === 0
            ? predictCellsPoisson(L, vals, betaS, design.offset, eta, mu, pw, table)
            : predictCellsNegbin(L, vals, betaS, design.offset, eta, mu, pw, alpha, table, sums);
        return { d, eta: bits(eta), mu: bits(mu), out: bits(sums.out) };
      };
      const plain = run(null);
      assert.deepEqual(plain, run(ones), `alpha ${alpha}`);
      assert.equal(plain.eta, bits(written), "eta as linearPredictorCells writes it");
    }
  });

  test(`${model}: working cell sums from the means equal the sums of stored weights and responses to the last bit`, () => {
    const eta = new Float64Array(n),
      mu = new Float64Array(n);
    predictCellsPoisson(L, vals, betaS, design.offset, eta, mu, null, CountTable.of(design.y, 0)!);
    for (const alpha of [0, 0.4])
      for (const withResponse of [true, false]) {
        const w = new Float64Array(n),
          z = new Float64Array(n);
        for (let i = 0; i < n; i++) {
          const m = mu[i];
          w[i] = alpha === 0 ? m : m / (1 + alpha * m);
          z[i] = withResponse ? eta[i] - design.offset[i] + (design.y[i] - m) / m : 0;
        }
        const work = { mu, eta, off: design.offset, y: design.y, pw: null, alpha, withResponse };
        const a = cellSums(vals, L, 0, n, work, null),
          b = cellSums(vals, L, 0, n, w, z);
        for (const k of ["s0", "s1", "s2", "z0", "z1"] as const)
          assert.equal(bits(a[k]), bits(b[k]), `${k}, alpha ${alpha}, response ${withResponse}`);
        assert.ok(a.s0.some((v) => v > 0));
      }
  });
}
