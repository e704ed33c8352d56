// Our small Cholesky kernel against ml-matrix's decompositions.
import { test } from "node:test";
import assert from "node:assert/strict";
import { CholeskyDecomposition, Matrix, inverse } from "ml-matrix";
import { cholesky, choleskyInverse, choleskySolve, screenRank } from "../../src/math/linalg.js";
import { rng } from "../helpers.js";
import { brentRoot } from "../../src/math/roots.js";

function randomSpd(p: number, seed: number): number[][] {
  const u = rng(seed);
  const a = Matrix.rand(p + 3, p, { random: u });
  return a.transpose().mmul(a).to2DArray();
}

test("cholesky, solve and inverse agree with ml-matrix to 1e-12", () => {
  for (const p of [1, 3, 8, 20]) {
    const a = randomSpd(p, p);
    const l = cholesky({ p, data: Float64Array.from(a.flat()) })!;
    const ref = new CholeskyDecomposition(new Matrix(a)).lowerTriangularMatrix.to2DArray();
    for (let i = 0; i < p; i++)
      for (let j = 0; j <= i; j++) assert.ok(Math.abs(l[i * p + j] - ref[i][j]) < 1e-12 * (1 + Math.abs(ref[i][j])));
    const b = Float64Array.from({ length: p }, (_, i) => i + 1);
    const x = choleskySolve(l, p, b);
    const xr = new CholeskyDecomposition(new Matrix(a)).solve(Matrix.columnVector([...b])).to1DArray();
    x.forEach((v, i) => assert.ok(Math.abs(v - xr[i]) < 1e-9 * (1 + Math.abs(xr[i]))));
    const inv = choleskyInverse(l, p).data;
    const ir = inverse(new Matrix(a)).to2DArray();
    for (let i = 0; i < p; i++)
      for (let j = 0; j < p; j++) assert.ok(Math.abs(inv[i * p + j] - ir[i][j]) < 1e-8 * (1 + Math.abs(ir[i][j])));
  }
});

test("rank screening drops the later of two dependent columns, in model order", () => {
  const x = [
    [1, 0, 2, 1],
    [1, 1, 2, 0],
    [1, 2, 2, 3],
    [1, 3, 2, 1],
    [1, 4, 2, 2],
  ];
  const m = new Matrix(x);
  const g = m.transpose().mmul(m);
  const keep = screenRank({ p: 4, data: Float64Array.from(g.to1DArray()) });
  assert.deepEqual(keep, [true, true, false, true]);
  assert.equal(cholesky({ p: 2, data: Float64Array.from([1, 2, 2, 4]) }), null, "singular matrix is refused");
});

test("Brent's root finder solves cos x = x and x³ = 2 to 1e-12", () => {
  assert.ok(Math.abs(brentRoot((x) => Math.cos(x) - x, 0, 1, 1e-14) - 0.7390851332151607) < 1e-12);
  assert.ok(Math.abs(brentRoot((x) => x ** 3 - 2, 0, 3, 1e-14) - Math.cbrt(2)) < 1e-12);
  assert.throws(() => brentRoot((x) => x * x + 1, -1, 1));
});
