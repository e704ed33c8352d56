// Log-likelihoods and scores of the four excess-zero families, per row, with
// λ = exp(η) the count part's mean (η = xβ + log exposure) and u = zγ the zero
// part's linear predictor:
// * zero-inflated (Lambert 1992; Greene 1994 for the NB2 form), π = logistic(u)
//   the probability of a structural zero: P(0) = π + (1 − π)f(0),
//   P(y) = (1 − π)f(y) for y > 0;
// * hurdle (Mullahy 1986), p = logistic(u) the probability of a non-zero
//   count: P(0) = 1 − p, P(y) = p·f(y)/(1 − f(0)) for y > 0;
// f is the Poisson or the NB2 (variance λ + αλ², parametrised by a = log α).
// The scores are with respect to η, u and a.
import { lgamma } from "../math/distributions.js";
import { harmonic, lgammaRatio } from "./family.js";

export type ZeroFamily = "zip" | "zinb" | "hurdle-poisson" | "hurdle-negbin";

export const ZERO_FAMILIES: readonly ZeroFamily[] = ["zip", "zinb", "hurdle-poisson", "hurdle-negbin"];

export const isNegbinForm = (f: ZeroFamily) => f === "zinb" || f === "hurdle-negbin";
export const isHurdle = (f: ZeroFamily) => f === "hurdle-poisson" || f === "hurdle-negbin";

export interface RowTerms {
  logLik: number;
  /** ∂ℓ/∂η, ∂ℓ/∂u, ∂ℓ/∂a. */
  dEta: number;
  dU: number;
  dA: number;
}

/** log σ(u) and log(1 − σ(u)) without overflow. */
function logSigmoid(u: number): number {
  return u >= 0 ? -Math.log1p(Math.exp(-u)) : u - Math.log1p(Math.exp(u));
}

/**
 * log f(y), its derivatives in η and a, and the same for log f(0); alpha = 0
 * is the Poisson. Derivatives of the NB2 with r = 1/α (Cameron and Trivedi,
 * Regression Analysis of Count Data, 2nd ed., 2013, §3.3).
 */
function countPart(y: number, eta: number, alpha: number) {
  const lambda = Math.exp(eta);
  if (alpha === 0) {
    return {
      logF: y * eta - lambda - lgamma(y + 1),
      dEta: y - lambda,
      dA: 0,
      logF0: -lambda,
      dEta0: -lambda,
      dA0: 0,
    };
  }
  const r = 1 / alpha;
  const logRatio = -Math.log1p(alpha * lambda); // log(r/(r + λ))
  const logF0 = r * logRatio;
  const dEta0 = -lambda / (1 + alpha * lambda);
  // ∂ log f/∂r = ψ(y + r) − ψ(r) + log(r/(r + λ)) + 1 − (r + y)/(r + λ); ∂/∂a = −r·∂/∂r.
  // 1 − r/(r + λ) and 1 − (r + y)/(r + λ) written as αλ/(1 + αλ) and α(λ − y)/(1 + αλ): no cancellation as α → 0.
  const dR0 = logRatio + (alpha * lambda) / (1 + alpha * lambda);
  const logF = lgammaRatio(y, r) - lgamma(y + 1) + r * logRatio + (y > 0 ? y * (eta - Math.log(r + lambda)) : 0);
  // The log-gamma and digamma differences without cancellation when r is large (alpha near its boundary).
  const dR = harmonic(y, r)[0] + logRatio + (alpha * (lambda - y)) / (1 + alpha * lambda);
  return { logF, dEta: (y - lambda) / (1 + alpha * lambda), dA: -r * dR, logF0, dEta0, dA0: -r * dR0 };
}

/** The row's log-likelihood and scores (weights are applied by the caller). */
export function rowTerms(family: ZeroFamily, y: number, eta: number, u: number, a: number): RowTerms {
  const alpha = isNegbinForm(family) ? Math.exp(a) : 0;
  const c = countPart(y, eta, alpha);
  const logS = logSigmoid(u); // log σ(u)
  const logNotS = logSigmoid(-u); // log(1 − σ(u))
  const s = Math.exp(logS);
  if (isHurdle(family)) {
    // p = σ(u): the chance of a non-zero count.
    if (y === 0) return { logLik: logNotS, dEta: 0, dU: -s, dA: 0 };
    const f0 = Math.exp(c.logF0);
    const log1mF0 = Math.log(-Math.expm1(c.logF0));
    const k = f0 / (1 - f0);
    return {
      logLik: logS + c.logF - log1mF0,
      dEta: c.dEta + k * c.dEta0,
      dU: 1 - s,
      dA: c.dA + k * c.dA0,
    };
  }
  // π = σ(u): the chance of a structural zero.
  if (y > 0) return { logLik: logNotS + c.logF, dEta: c.dEta, dU: -s, dA: c.dA };
  // log P(0) = log(π + (1 − π)f0) = logaddexp(log π, log(1 − π) + log f0).
  const x1 = logS,
    x2 = logNotS + c.logF0;
  const m = Math.max(x1, x2);
  const logP0 = m + Math.log(Math.exp(x1 - m) + Math.exp(x2 - m));
  const wStruct = Math.exp(x1 - logP0); // share of P(0) from the structural zero
  const wCount = Math.exp(x2 - logP0);
  return {
    logLik: logP0,
    dEta: wCount * c.dEta0,
    // ∂/∂u: π(1 − π)(1 − f0)/P0 = wStruct·(1 − π) − wCount·π.
    dU: wStruct * (1 - s) - wCount * s,
    dA: wCount * c.dA0,
  };
}
