// The Poisson fit by Newton's method on sums the engine returns (see
// io/engine-sums.ts): with the log link, Newton's step on the
// log-likelihood is the IRLS step (McCullagh and Nelder, Generalized Linear
// Models, 2nd ed., 1989, §2.5). Steps are halved while the deviance rises;
// the fit stops when the Newton decrement U'I⁻¹U (twice the log-likelihood
// still to gain) is below 1e-18 of the deviance, so the estimate is as exact
// as the sums. Coefficients held at a value (profiles, term tests) stay out
// of the step.
import { FitError } from "../errors.js";
import { cholesky, choleskyInverse, choleskySolve, type SymMatrix } from "../math/linalg.js";

export interface SumsAtBeta {
  score: Float64Array;
  information: Float64Array;
  deviance: number;
  pearson: number;
  logLik: number;
}

export interface SumsFit {
  beta: Float64Array;
  /** The sums at the estimate. */
  at: SumsAtBeta;
  /** Inverse Fisher information over the free columns, in order (for the log link also the observed information). */
  covariance: SymMatrix;
  free: number[];
  iterations: number;
}

/** Solve I_ff·d = U_f over the free columns, with I's diagonal scaled to 1 (Jacobi) for the factorisation. */
function newtonStep(
  s: SumsAtBeta,
  p: number,
  free: number[],
): { step: Float64Array; l: Float64Array; d: Float64Array } {
  const q = free.length;
  const d = Float64Array.from(free, (c) => 1 / Math.sqrt(s.information[c * p + c]));
  const a = new Float64Array(q * q);
  const b = new Float64Array(q);
  free.forEach((c, j) => {
    b[j] = s.score[c] * d[j];
    free.forEach((k, m) => (a[j * q + m] = s.information[c * p + k] * d[j] * d[m]));
  });
  const l = cholesky({ p: q, data: a });
  if (l === null || !d.every(Number.isFinite))
    throw new FitError(
      "the information matrix from the engine's sums is not positive definite: a column is aliased or has no events; read the rows instead (--merge-patterns never).",
    );
  const z = choleskySolve(l, q, b);
  return { step: Float64Array.from(z, (v, j) => v * d[j]), l, d };
}

export function fitBySums(
  p: number,
  sumsAt: (beta: Float64Array) => SumsAtBeta,
  options: { fixed?: Map<number, number>; start: Float64Array; maxIter?: number },
): SumsFit {
  const fixed = options.fixed ?? new Map<number, number>();
  const free = Array.from({ length: p }, (_, c) => c).filter((c) => !fixed.has(c));
  let beta = Float64Array.from(options.start);
  for (const [c, v] of fixed) beta[c] = v;
  let s = sumsAt(beta);
  const maxIter = options.maxIter ?? 100;
  for (let it = 1; it <= maxIter; it++) {
    const { step, l, d } = newtonStep(s, p, free);
    let decrement = 0;
    free.forEach((c, j) => (decrement += s.score[c] * step[j]));
    if (decrement < 1e-18 * (Math.abs(s.deviance) + 1)) {
      const inv = choleskyInverse(l, free.length);
      const q = free.length;
      const cov = new Float64Array(q * q);
      for (let j = 0; j < q; j++) for (let m = 0; m < q; m++) cov[j * q + m] = inv.data[j * q + m] * d[j] * d[m];
      return { beta, at: s, covariance: { p: q, data: cov }, free, iterations: it };
    }
    let t = 1;
    for (let half = 0; half < 30; half++, t /= 2) {
      const next = Float64Array.from(beta);
      free.forEach((c, j) => (next[c] += t * step[j]));
      const ns = sumsAt(next);
      if (Number.isFinite(ns.deviance) && ns.deviance <= s.deviance + 1e-12 * Math.abs(s.deviance)) {
        beta = next;
        s = ns;
        break;
      }
      if (half === 29) throw new FitError("the fit from the engine's sums could not lower the deviance.");
    }
  }
  throw new FitError(`the fit from the engine's sums did not converge in ${maxIter} Newton steps.`);
}
