// Sandwich (Huber–White, HC0) covariance for a log-link count model:
// A⁻¹ B A⁻¹ with A the expected information X'WX and B = Σ w·s_i s_iᵀ, where
// s_i = x_i (y_i − mu_i)/(1 + alpha·mu_i) is row i's score contribution
// (White 1980; for GLMs, e.g. Zeileis 2006, J. Statistical Software 16(9)).
import type { Design } from "../design/design.js";
import { informationOf } from "../fit/kernel/information.js";
import type { GlmFit } from "../fit/kernel/types.js";
import type { SymMatrix } from "../math/linalg.js";

export function sandwichCovariance(design: Design, fit: GlmFit): SymMatrix {
  const { y, weights } = design;
  const n = design.n;
  const w = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const mu = fit.mu[i];
    if (!(mu > 0)) continue;
    const r = (y[i] - mu) / (1 + fit.alpha * mu);
    w[i] = (weights ? weights[i] : 1) * r * r;
  }
  return informationOf(design.matrix, fit).sandwich(w);
}
