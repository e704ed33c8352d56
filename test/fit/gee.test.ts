// Generalized estimating equations against a numpy root of the same
// estimating equations found by scipy.optimize.root
// (test/fixtures/scipy/gee_runner.py): estimates, the working correlation,
// the Pearson scale and the robust (CR1) covariance, to 1e-6, for the
// exchangeable and AR(1) structures under the Poisson and NB2 variance
// functions; and the independence structure against the one-way cluster
// sandwich of infer/cluster.ts.
import { test } from "node:test";
import assert from "node:assert/strict";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { buildDesign } from "../../src/design/design.js";
import { fitCounts } from "../../src/fit/count-fit.js";
import { fitGee } from "../../src/fit/gee.js";
import { applyInverse, type WorkingCorrelation } from "../../src/fit/working-correlation.js";
import { parseFormula } from "../../src/formula/formula.js";
import { clusterCovariance } from "../../src/infer/cluster.js";
import { parseTable } from "../../src/io/csv.js";
import { columnLabels } from "../../src/io/table.js";
import { FIXTURES, assertRel } from "../helpers.js";

const ref = JSON.parse(readFileSync(join(FIXTURES, "scipy", "gee_expected.json"), "utf8"));

function setup() {
  const table = parseTable(readFileSync(join(FIXTURES, "scipy", ref.data)), { source: ref.data });
  const design = buildDesign(table, parseFormula(ref.model), { exposure: ref.exposure });
  const labels = columnLabels(table, ref.cluster, design.rowIndex);
  const index = new Map<string, number>();
  const ids = Int32Array.from(labels, (l) => {
    if (!index.has(l)) index.set(l, index.size);
    return index.get(l)!;
  });
  const order = Float64Array.from(columnLabels(table, ref.order, design.rowIndex), Number);
  return { design, clusters: { ids, count: index.size }, order };
}

const control = { tolerance: 1e-13, maxIter: 100 };

for (const [name, family, structure] of [
  ["poisson_exchangeable", "poisson", "exchangeable"],
  ["poisson_ar1", "poisson", "ar1"],
  ["negbin_exchangeable", "negbin", "exchangeable"],
  ["negbin_ar1", "negbin", "ar1"],
] as const) {
  test(`GEE ${family} ${structure}: estimates, correlation and robust SEs match scipy's root of the equations to 1e-6`, () => {
    const { design, clusters, order } = setup();
    const mf = fitCounts(design, { family, control });
    if (family === "negbin") assertRel(mf.fit.alpha, ref.negbin_alpha, 1e-6, "NB2 alpha (scipy minimize)");
    const g = fitGee(design, mf.fit, { structure, clusters, order, estimateScale: false, tolerance: 1e-12 });
    assert.ok(g);
    assert.ok(g.converged, "converged");
    const want = ref.cases[name];
    mf.fit.estimable.forEach((c, k) => assertRel(g.beta[c], want.estimate[k], 1e-6, `${design.columns[c].name}`));
    assertRel(g.correlation, want.correlation, 1e-6, "working correlation");
    assertRel(g.pearsonScale, want.pearson_scale, 1e-6, "Pearson scale");
    assert.equal(g.scale, 1);
    want.robust_covariance.forEach((row: number[], i: number) =>
      row.forEach((v, j) => assertRel(g.robustCovariance.data[i * row.length + j], v, 1e-6, `robust [${i}, ${j}]`)),
    );
    want.bread_inverse.forEach((row: number[], i: number) =>
      row.forEach((v, j) => assertRel(g.modelCovariance.data[i * row.length + j], v, 1e-6, `B⁻¹ [${i}, ${j}]`)),
    );
  });
}

test("quasi-Poisson GEE: the Poisson estimates, and φ·B⁻¹ as the model-based covariance (scipy runner)", () => {
  const { design, clusters, order } = setup();
  const mf = fitCounts(design, { family: "quasipoisson", control });
  const g = fitGee(design, mf.fit, {
    structure: "exchangeable",
    clusters,
    order,
    estimateScale: true,
    tolerance: 1e-12,
  });
  assert.ok(g);
  const want = ref.cases.poisson_exchangeable;
  mf.fit.estimable.forEach((c, k) => assertRel(g.beta[c], want.estimate[k], 1e-6, design.columns[c].name));
  assertRel(g.scale, want.pearson_scale, 1e-6, "scale");
  want.bread_inverse.forEach((row: number[], i: number) =>
    row.forEach((v, j) =>
      assertRel(g.modelCovariance.data[i * row.length + j], v * want.pearson_scale, 1e-6, `φB⁻¹ [${i}, ${j}]`),
    ),
  );
});

test("the independence structure is the independence fit with the one-way CR1 cluster covariance", () => {
  const { design, clusters, order } = setup();
  const mf = fitCounts(design, { family: "poisson", control });
  const g = fitGee(design, mf.fit, { structure: "independence", clusters, order, estimateScale: false });
  assert.ok(g);
  assert.equal(g.correlation, 0);
  mf.fit.estimable.forEach((c, k) => {
    assertRel(g.beta[c], mf.fit.beta[c], 1e-9, "estimate");
    assertRel(g.beta[c], ref.cases.poisson_independence.estimate[k], 1e-6, "scipy estimate");
  });
  const cc = clusterCovariance(design, mf.fit, [{ column: "clinic", ...clusters }]);
  cc.covariance.data.forEach((v, k) => assertRel(g.robustCovariance.data[k], v, 1e-8, `cov ${k}`));
});

test("the working correlation inverses agree with the dense inverse of R", () => {
  for (const structure of ["exchangeable", "ar1"] as WorkingCorrelation[])
    for (const rho of [-0.15, 0.3, 0.8]) {
      const n = 6;
      const r = Array.from({ length: n }, (_, j) =>
        Array.from({ length: n }, (_, k) => (j === k ? 1 : structure === "ar1" ? rho ** Math.abs(j - k) : rho)),
      );
      const z = Float64Array.from({ length: n }, (_, j) => Math.sin(j + 1) + j / 3);
      const out = new Float64Array(n);
      applyInverse(structure, rho, n, 1, z, out);
      // R · (R⁻¹ z) gives back z.
      r.forEach((row, j) => {
        const back = row.reduce((a, v, k) => a + v * out[k], 0);
        assertRel(back, z[j], 1e-12, `${structure} ρ=${rho} row ${j}`);
      });
    }
});
