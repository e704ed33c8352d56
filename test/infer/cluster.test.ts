// Cluster-robust covariances (groundwork for clustered counts) against a
// direct numpy computation at the scipy.optimize estimate
// (test/fixtures/scipy/cluster_runner.py): one-way CR1 by clinic and the
// two-way clinic-and-week estimator, to 1e-8; and the Jacobi eigen-solver
// against ml-matrix.
import { test } from "node:test";
import assert from "node:assert/strict";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { EigenvalueDecomposition, Matrix } from "ml-matrix";
import { buildDesign } from "../../src/design/design.js";
import { fitGlm } from "../../src/fit/kernel/glm.js";
import { parseFormula } from "../../src/formula/formula.js";
import { type Clustering, clusterCovariance } from "../../src/infer/cluster.js";
import { parseTable } from "../../src/io/csv.js";
import { columnLabels, type Table } from "../../src/io/table.js";
import { symmetricEigen } from "../../src/math/eigen.js";
import { FIXTURES, assertRel, rng } from "../helpers.js";

const ref = JSON.parse(readFileSync(join(FIXTURES, "scipy", "cluster_expected.json"), "utf8"));

function clustering(table: Table, column: string, rows: Int32Array): Clustering {
  const labels = columnLabels(table, column, rows);
  const index = new Map<string, number>();
  const ids = Int32Array.from(labels, (l) => {
    if (!index.has(l)) index.set(l, index.size);
    return index.get(l)!;
  });
  return { column, ids, count: index.size };
}

function setup() {
  const table = parseTable(readFileSync(join(FIXTURES, "scipy", ref.data)), { source: ref.data });
  const design = buildDesign(table, parseFormula(ref.model), { exposure: ref.exposure });
  const fit = fitGlm(design.matrix, design, { control: { tolerance: 1e-13, maxIter: 100 } });
  return { table, design, fit };
}

function assertMatrix(actual: Float64Array, expected: number[][], tol: number, what: string) {
  expected.forEach((row, i) => {
    row.forEach((x, j) => assertRel(actual[i * row.length + j], x, tol, `${what} [${i}, ${j}]`));
  });
}

test("one-way CR1 by clinic matches numpy's direct sandwich at the scipy estimate to 1e-8", () => {
  const { table, design, fit } = setup();
  fit.estimable.forEach((c, k) => assertRel(fit.beta[c], ref.estimate[k], 1e-9, "estimate"));
  const cc = clusterCovariance(design, fit, [clustering(table, "clinic", design.rowIndex)]);
  assert.equal(cc.type, "cluster-CR1");
  assert.deepEqual(cc.clusters, [{ column: "clinic", count: ref.one_way_clinic.clusters }]);
  assert.equal(cc.df, ref.one_way_clinic.clusters - 1);
  assertMatrix(cc.covariance.data, ref.one_way_clinic.covariance, 1e-8, "CR1");
});

test("two-way clinic and week (Cameron, Gelbach and Miller 2011) matches numpy to 1e-8", () => {
  const { table, design, fit } = setup();
  const cc = clusterCovariance(design, fit, [
    clustering(table, "clinic", design.rowIndex),
    clustering(table, "week", design.rowIndex),
  ]);
  assert.equal(cc.type, "two-way-cluster-CR1");
  assert.equal(cc.eigenvaluesClipped, ref.two_way.eigenvalues_before_fix.filter((v: number) => v < 0).length);
  assertMatrix(cc.covariance.data, ref.two_way.covariance, 1e-8, "two-way");
});

test("the Jacobi eigen-solver agrees with ml-matrix on random symmetric matrices", () => {
  const u = rng(31);
  for (const p of [1, 2, 5, 9]) {
    const a = Matrix.rand(p, p, { random: u });
    const s = a.add(a.transpose()).sub(Matrix.eye(p, p).mul(0.8));
    const mine = symmetricEigen({ p, data: Float64Array.from(s.to2DArray().flat()) });
    const theirs = new EigenvalueDecomposition(s, { assumeSymmetric: true }).realEigenvalues;
    const a1 = [...mine.values].sort((x, y) => x - y),
      a2 = [...theirs].sort((x, y) => x - y);
    a1.forEach((v, k) => assert.ok(Math.abs(v - a2[k]) < 1e-10 * (1 + Math.abs(a2[k])), `p ${p}: ${v} vs ${a2[k]}`));
  }
});
