// The information view of a fit against dense matrix algebra by ml-matrix on
// the design written out in full: leverages, the sandwich and the weight
// projection must not depend on the kernel's internal centring and scaling.
import { test } from "node:test";
import assert from "node:assert/strict";
import { Matrix, inverse } from "ml-matrix";
import { columnValues } from "../../../src/design/matrix-columns.js";
import { fitGlm } from "../../../src/fit/kernel/glm.js";
import { informationOf } from "../../../src/fit/kernel/information.js";
import { assertRel, fitCsv, rng, simulateRates } from "../../helpers.js";

function denseParts(seed: number) {
  const { design } = fitCsv(simulateRates(rng(seed), 300, 0.4), "y ~ g * x", { exposure: "e" });
  const fit = fitGlm(design.matrix, design);
  const cols = fit.estimable;
  const X = new Matrix(design.n, cols.length);
  cols.forEach((c, j) => {
    const v = columnValues(design.matrix, c);
    for (let i = 0; i < design.n; i++) X.set(i, j, v[i]);
  });
  const xwx = (w: ArrayLike<number>) => {
    const xw = X.clone();
    for (let i = 0; i < design.n; i++) for (let j = 0; j < cols.length; j++) xw.set(i, j, X.get(i, j) * w[i]);
    return X.transpose().mmul(xw);
  };
  return { design, fit, X, xwx, A: xwx(fit.mu) };
}

test("row quadratic forms x_iᵀ(X'WX)⁻¹x_i equal the dense computation (ml-matrix) to 1e-9", () => {
  const { design, fit, X, A } = denseParts(11);
  const Ainv = inverse(A);
  const quad = informationOf(design.matrix, fit).rowQuadraticForms();
  for (let i = 0; i < design.n; i += 7) {
    const x = X.getRowVector(i);
    assertRel(quad[i], x.mmul(Ainv).mmul(x.transpose()).get(0, 0), 1e-9, `row ${i}`);
  }
});

test("the sandwich A⁻¹BA⁻¹ equals the dense computation (ml-matrix) to 1e-9", () => {
  const { design, fit, xwx, A } = denseParts(12);
  const omega = Float64Array.from(design.y, (y, i) => (y - fit.mu[i]) ** 2);
  const Ainv = inverse(A);
  const ref = Ainv.mmul(xwx(omega)).mmul(Ainv);
  const s = informationOf(design.matrix, fit).sandwich(omega);
  for (let r = 0; r < s.p; r++)
    for (let c = 0; c < s.p; c++)
      assert.ok(
        Math.abs(s.data[r * s.p + c] - ref.get(r, c)) <= 1e-9 * Math.sqrt(Math.abs(ref.get(r, r) * ref.get(c, c))),
        `sandwich [${r}, ${c}]`,
      );
});

test("the weight projection (X'ω)ᵀ(X'ΩX)⁻¹(X'ω) equals the dense computation (ml-matrix) to 1e-9", () => {
  const { design, fit, X, xwx } = denseParts(13);
  const omega = Float64Array.from(fit.mu, (m) => m * 0.8);
  const b = X.transpose().mmul(Matrix.columnVector([...omega]));
  const ref = b
    .transpose()
    .mmul(inverse(xwx(omega)))
    .mmul(b)
    .get(0, 0);
  assertRel(informationOf(design.matrix, fit).weightProjection(omega), ref, 1e-9, "projection");
});
