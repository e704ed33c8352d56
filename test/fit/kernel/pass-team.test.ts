// Passes split between two threads (src/fit/kernel/pass-team.ts): the same
// fit to the last bit whether the helper thread or this thread runs the second
// half, and the same fit as an unsplit pass to rounding (the halves' sums are
// added in another order). The split row count is lowered for these tests
// (TALLYFIT_PASS_SPLIT_ROWS) so that small data split.
import { test } from "node:test";
import assert from "node:assert/strict";
import { constrainedStatistic, fitCounts } from "../../../src/fit/count-fit.js";
import type { Workspace } from "../../../src/fit/kernel/types.js";
import { helperPasses, passSplit, PASS_SPLIT_ROWS } from "../../../src/fit/kernel/pass-team.js";
import { assertRel, fitCsv, rng, simulateRates } from "../../helpers.js";

function withEnv<T>(vars: Record<string, string | undefined>, f: () => T): T {
  const saved = Object.fromEntries(Object.keys(vars).map((k) => [k, process.env[k]]));
  for (const [k, v] of Object.entries(vars))
    if (v === undefined) delete process.env[k];
    else process.env[k] = v;
  try {
    return f();
  } finally {
    for (const [k, v] of Object.entries(saved))
      if (v === undefined) delete process.env[k];
      else process.env[k] = v;
  }
}

const { design } = fitCsv(simulateRates(rng(5), 6000, 0.5), "y ~ g * x", { exposure: "e" });
const bits = (a: Float64Array) => Buffer.from(a.buffer, a.byteOffset, a.byteLength).toString("hex");

for (const family of ["poisson", "negbin"] as const) {
  test(`${family}: split passes give the same fit to the last bit on one thread and on two`, () => {
    const one = withEnv({ TALLYFIT_PASS_SPLIT_ROWS: "1000", TALLYFIT_WORKERS: "0" }, () =>
      fitCounts(design, { family }),
    );
    const before = helperPasses();
    const two = withEnv({ TALLYFIT_PASS_SPLIT_ROWS: "1000", TALLYFIT_WORKERS: "1" }, () =>
      fitCounts(design, { family }),
    );
    assert.ok(helperPasses() > before, "the helper thread ran second halves");
    assert.equal(bits(two.fit.beta), bits(one.fit.beta));
    assert.equal(bits(two.fit.covariance.data), bits(one.fit.covariance.data));
    assert.equal(bits(two.fit.mu), bits(one.fit.mu));
    assert.equal(two.fit.deviance, one.fit.deviance);
    assert.equal(two.negbin?.alpha, one.negbin?.alpha);
    assert.equal(two.negbin?.logLik, one.negbin?.logLik);
    assert.equal(two.fit.iterations, one.fit.iterations);
  });

  test(`${family}: split and unsplit passes give the same fit to 1e-12`, () => {
    const split = withEnv({ TALLYFIT_PASS_SPLIT_ROWS: "1000", TALLYFIT_WORKERS: "0" }, () =>
      fitCounts(design, { family }),
    );
    const whole = withEnv({ TALLYFIT_PASS_SPLIT_ROWS: undefined }, () => fitCounts(design, { family }));
    split.fit.beta.forEach((b, j) => assertRel(b, whole.fit.beta[j], 1e-12, `coefficient ${j}`));
    split.fit.covariance.data.forEach((v, j) => assertRel(v, whole.fit.covariance.data[j], 1e-12, `covariance ${j}`));
    assertRel(split.fit.deviance, whole.fit.deviance, 1e-12, "deviance");
    if (family === "negbin") {
      assertRel(split.negbin!.alpha, whole.negbin!.alpha, 1e-12, "alpha");
      assertRel(split.negbin!.logLik, whole.negbin!.logLik, 1e-12, "log-likelihood");
    }
  });

  test(`${family}: profile refits that rewrite one workspace give the same statistics on one thread and on two`, () => {
    // Each refit writes offset + b·x into the workspace's one offset array; a copy of it for the helper
    // thread made once and kept would go stale, and the two-thread statistics would differ.
    const mf = withEnv({ TALLYFIT_PASS_SPLIT_ROWS: "1000", TALLYFIT_WORKERS: "0" }, () =>
      fitCounts(design, { family }),
    );
    const col = 1;
    const at = [-0.3, -0.1, 0.2, 0.4].map((d) => mf.fit.beta[col] + d);
    const run = (workers: string, workspace: Workspace) =>
      withEnv({ TALLYFIT_PASS_SPLIT_ROWS: "1000", TALLYFIT_WORKERS: workers }, () => {
        const stat = constrainedStatistic(design, mf, col, workspace);
        return at.map((b) => {
          const v = stat(b);
          return { v, off: workspace.off };
        });
      });
    const before = helperPasses();
    const one = run("0", {});
    const two = run("1", {});
    assert.ok(helperPasses() > before, "the helper thread ran second halves");
    assert.deepEqual(
      two.map((r) => r.v),
      one.map((r) => r.v),
    );
    assert.ok(one[0].v > 0 && one.every((r) => Number.isFinite(r.v)));
    assert.ok(
      two.every((r) => r.off !== undefined && r.off === two[0].off),
      "one offset array for every refit",
    );
  });
}

test("a pass is split from PASS_SPLIT_ROWS rows, at the middle row", () => {
  withEnv({ TALLYFIT_PASS_SPLIT_ROWS: undefined }, () => {
    assert.equal(passSplit(PASS_SPLIT_ROWS - 1), 0);
    assert.equal(passSplit(PASS_SPLIT_ROWS), PASS_SPLIT_ROWS / 2);
    assert.equal(passSplit(1000001), 500000);
  });
});
