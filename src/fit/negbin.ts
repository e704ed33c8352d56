// Maximum likelihood for the NB2 negative binomial with log link: IRLS for
// the coefficients at fixed alpha inside a one-dimensional search for alpha
// (Lawless 1987, Canadian Journal of Statistics 15:209–225).
import type { DesignMatrix } from "../design/design.js";
import { FitError } from "../errors.js";
import { CountTable } from "./count-table.js";
import { alphaDerivativesFromSums, harmonic, logDensity } from "./family.js";
import { fitGlm } from "./kernel/glm.js";
import { prepareFit } from "./kernel/setup.js";
import type { FitControl, FitData, FitOptions, FitSetup, GlmFit, Workspace } from "./kernel/types.js";

export interface NegbinFit {
  fit: GlmFit;
  alpha: number;
  /** Standard error of alpha from its observed information −∂²ℓ/∂α² (null at the boundary). */
  alphaStdError: number | null;
  logLik: number;
  /** True when the likelihood is largest at alpha = 0: the model reduces to the Poisson. */
  boundary: boolean;
  outerIterations: number;
  /**
   * The Poisson fit it started from, with its log-likelihood (with a
   * workspace, its eta and mu may since hold a later fit's: see NegbinOptions.workspace).
   */
  poisson: GlmFit;
  poissonLogLik: number;
}

/** NB2 log-likelihood at the given means (rows with mu = 0 and y = 0 contribute 0). */
export function negbinLogLik(y: Float64Array, mu: Float64Array, pw: Float64Array | null, alpha: number): number {
  const table = alpha === 0 ? null : CountTable.of(y, alpha);
  if (table === null) {
    let ll = 0;
    for (let i = 0; i < y.length; i++) if (mu[i] > 0) ll += (pw ? pw[i] : 1) * logDensity(y[i], mu[i], alpha);
    return ll;
  }
  // The y-only terms log Γ(y + r) − log Γ(r) − log y! depend on y alone at fixed alpha: tabulate them.
  const r = 1 / alpha,
    logAlpha = Math.log(alpha);
  const yi32 = table.counts,
    tab = table.logLikTerms;
  let ll = 0;
  for (let i = 0; i < y.length; i++) {
    const m = mu[i];
    if (!(m > 0)) continue;
    const k = yi32[i];
    const l1 = Math.log1p(alpha * m);
    // y·log(alpha·mu/(1 + alpha·mu)) − r·log(1 + alpha·mu), with log(alpha·mu) = log alpha + log mu.
    const u = tab[k] - r * l1 + (k === 0 ? 0 : k * (logAlpha + Math.log(m) - l1));
    ll += pw === null ? u : pw[i] * u;
  }
  return ll;
}

/**
 * Score g = ∂ℓ/∂α and its derivative h = ∂²ℓ/∂α² at fixed means (Cameron and
 * Trivedi 2013, §3.3). Per row, with q = 1 + α·mu, l = log q and the harmonic
 * sums d, e of the count:
 *   g_i = (l − d)/α² + (y − mu)/(α q)
 *   h_i = −2(l − d)/α³ + (mu/q − e/α²)/α² − (y − mu)(1 + 2α·mu)/(α q)²
 * The five row sums are accumulated separately and combined once (see
 * alphaDerivativesFromSums); IRLS can also accumulate them in its own pass.
 */
export function alphaDerivatives(
  y: Float64Array,
  mu: Float64Array,
  pw: Float64Array | null,
  alpha: number,
): { g: number; h: number } {
  const r = 1 / alpha;
  const table = CountTable.of(y, alpha);
  const harmonicSums = table?.harmonic;
  let s1 = 0,
    s2 = 0,
    s3 = 0,
    s4 = 0,
    s5 = 0;
  for (let i = 0; i < y.length; i++) {
    const m = mu[i];
    if (!(m > 0)) continue;
    // The harmonic sums of the count: from the table when the counts are whole, else directly.
    let d: number, e: number;
    if (harmonicSums) {
      const k = table!.counts[i];
      d = harmonicSums.d[k];
      e = harmonicSums.e[k];
    } else [d, e] = harmonic(y[i], r);
    const am = alpha * m;
    const iq = 1 / (1 + am);
    const res = (y[i] - m) * iq;
    const w = pw === null ? 1 : pw[i];
    s1 += w * (Math.log1p(am) - d);
    s2 += w * res;
    s3 += w * m * iq;
    s4 += w * e;
    s5 += w * res * iq * (1 + 2 * am);
  }
  return alphaDerivativesFromSums([s1, s2, s3, s4, s5], alpha);
}

/** ∂ℓ/∂α at alpha → 0⁺ with the means fixed: ½ Σ w[(y − mu)² − y]. */
export function scoreAtZero(y: Float64Array, mu: Float64Array, pw: Float64Array | null): number {
  let s = 0;
  for (let i = 0; i < y.length; i++) if (mu[i] > 0) s += (pw ? pw[i] : 1) * ((y[i] - mu[i]) ** 2 - y[i]);
  return 0.5 * s;
}

/** Below this alpha the model is treated as the Poisson (the profile is flat to ~1e-6 in log-likelihood there). */
const ALPHA_MIN = 1e-6;
const ALPHA_CEILING = 1e8;

export interface NegbinOptions {
  control: FitControl;
  fixed?: Map<number, number>;
  start?: Float64Array | null;
  startAlpha?: number;
  /** A screening setup to reuse (same fixed columns). */
  setup?: FitSetup;
  /**
   * Start the alpha search at startAlpha from `start` without fitting the
   * Poisson model first (for the many nearby fits of term tests and
   * profiles); the Poisson fit is still made if alpha reaches the boundary.
   */
  warm?: boolean;
  /** Skip the information matrix (term tests and profiles need only the maximised likelihood). */
  likelihoodOnly?: boolean;
  /** Progress: called after each IRLS iteration of the fits made here. */
  onIteration?: (iteration: number, deviance: number) => void;
  /** A converged Poisson fit of the same rows and fixed columns, to start from instead of fitting one. */
  poisson?: GlmFit;
  /**
   * Arrays the fits made here write eta and mu into, one fit after the other
   * (see FitOptions.workspace): the result's means are these, and the Poisson
   * start's means are written over.
   */
  workspace?: Workspace;
}

/**
 * Fit the NB2 model. First, jointly: one Newton step for log alpha at the new
 * means after each IRLS step, accepted when it converges with alpha's score
 * at ~0. Otherwise (alpha near the boundary, or no convergence), alpha
 * maximises the profile log-likelihood
 * ℓp(alpha) = max_beta ℓ(beta, alpha), each evaluation an IRLS fit warm-started
 * from the last; by the envelope theorem dℓp/dalpha is the alpha score at
 * betâ(alpha). The root of that score in θ = log alpha is found by Newton
 * steps (curvature from ∂²ℓ/∂alpha², exact in expectation because the
 * information is block-diagonal; Lawless 1987) safeguarded by bisection
 * inside a bracket (the "rtsafe" scheme of Press et al., Numerical Recipes,
 * 3rd ed., §9.4).
 */
export function fitNegbin(m: DesignMatrix, data: FitData, o: NegbinOptions): NegbinFit {
  const setup = o.setup ?? prepareFit(m, data, o.fixed);
  const pw = data.weights;
  const warm = !!(o.warm && o.start && o.startAlpha && o.startAlpha > 0);
  let pois: GlmFit | null = o.poisson ?? null;
  let poisLL = pois ? negbinLogLik(data.y, pois.mu, pw, 0) : NaN;
  let poisMoment = NaN;
  // The Poisson fit made here writes its eta and mu into the workspace, which the
  // fits after it write over: then its means are gone (its coefficients stay),
  // and atBoundary, which returns it as the fit, fits it again.
  let poisMeansGone = false;
  const poissonFit = (withMeans = false) => {
    if (!pois || (withMeans && poisMeansGone)) {
      pois = fitGlm(m, data, {
        control: o.control,
        fixed: o.fixed,
        start: o.start,
        setup,
        alpha: 0,
        onIteration: o.onIteration,
        workspace: o.workspace,
      });
      poisMeansGone = false;
      poisLL = negbinLogLik(data.y, pois.mu, pw, 0);
    }
    return pois;
  };
  /** A fit at alpha > 0 from here on. */
  const fitAt = (options: FitOptions): GlmFit => {
    if (o.workspace && pois && pois !== o.poisson) poisMeansGone = true;
    return fitGlm(m, data, { ...options, workspace: o.workspace });
  };
  /** The method-of-moments alpha at the Poisson means, for a start (from the first Poisson fit's means). */
  const momentStart = () => {
    if (Number.isNaN(poisMoment)) poisMoment = momentAlpha(data.y, poissonFit().mu, pw);
    return poisMoment;
  };
  const atBoundary = (evals: number): NegbinFit => {
    const p = poissonFit(true);
    return {
      fit: p,
      alpha: 0,
      alphaStdError: null,
      logLik: poisLL,
      boundary: true,
      outerIterations: evals,
      poisson: p,
      poissonLogLik: poisLL,
    };
  };
  if (!warm && scoreAtZero(data.y, poissonFit().mu, pw) <= 0) return atBoundary(0);

  // Fast path: one Newton step for alpha after each IRLS step, from a good start.
  // When it does not settle (or alpha heads for the boundary) the safeguarded
  // profile search below decides.
  {
    let hitBoundary = false;
    const alphaStep = (mu: Float64Array, a: number, derivatives: { g: number; h: number } | null): number => {
      const { g, h } = derivatives ?? alphaDerivatives(data.y, mu, pw, a);
      const d1 = a * g,
        d2 = a * a * h + a * g;
      let step = d2 < 0 ? -d1 / d2 : Math.sign(d1);
      step = Math.max(-2, Math.min(2, step));
      const next = a * Math.exp(step);
      if (next < ALPHA_MIN) {
        hitBoundary = true;
        return 0;
      }
      if (next > ALPHA_CEILING) {
        hitBoundary = true;
        return 0;
      }
      return next;
    };
    const a0 = warm ? o.startAlpha! : Math.min(Math.max(momentStart(), 1e-4), 1e2);
    const start0 = warm ? o.start! : poissonFit().beta;
    let joint: GlmFit | null = null;
    try {
      joint = fitAt({
        control: { ...o.control, maxIter: Math.max(o.control.maxIter, 100) },
        fixed: o.fixed,
        start: start0,
        setup,
        alpha: a0,
        alphaStep,
        skipCovariance: !!o.likelihoodOnly,
        onIteration: o.onIteration,
      });
    } catch (e) {
      if (!(e instanceof FitError)) throw e;
    }
    if (joint?.converged && !hitBoundary && joint.alpha > 0) {
      const alpha = joint.alpha;
      // The score for alpha must be ~0 at the estimate; otherwise use the safeguarded search.
      // (The fit's last pass gives the score and the log-likelihood when it could accumulate them.)
      const at = joint.negbinAtEstimate;
      const { g, h } = at ?? alphaDerivatives(data.y, joint.mu, pw, alpha);
      if (Math.abs(alpha * g) <= 1e-6 * (1 + Math.abs(alpha * alpha * h))) {
        return {
          fit: joint,
          alpha,
          alphaStdError: h < 0 ? 1 / Math.sqrt(-h) : null,
          logLik: at ? at.logLik : negbinLogLik(data.y, joint.mu, pw, alpha),
          boundary: false,
          outerIterations: joint.iterations,
          poisson: pois ?? joint,
          poissonLogLik: pois ? poisLL : NaN,
        };
      }
    }
  }

  let beta = warm ? o.start! : poissonFit().beta;
  let last: GlmFit = warm ? (null as unknown as GlmFit) : poissonFit();
  let evals = 0;
  // Profile score in θ = log alpha and its approximate derivative.
  const score = (theta: number): { f: number; df: number; fit: GlmFit } => {
    const a = Math.exp(theta);
    const fit = fitAt({
      control: o.control,
      fixed: o.fixed,
      start: beta,
      setup,
      alpha: a,
      skipCovariance: true,
      stopOnPredicted: true,
    });
    evals++;
    if (fit.converged) beta = fit.beta;
    last = fit;
    const { g, h } = alphaDerivatives(data.y, fit.mu, pw, a);
    return { f: a * g, df: a * g + a * a * h, fit };
  };

  // Bracket the root: the score is positive below the maximum and negative above it.
  let theta = Math.log(Math.min(Math.max(o.startAlpha && o.startAlpha > 0 ? o.startAlpha : momentStart(), 1e-4), 1e2));
  let cur = score(theta);
  let lo = -Infinity,
    hi = Infinity;
  if (cur.f > 0) lo = theta;
  else hi = theta;
  let step = 1;
  while (!Number.isFinite(lo) || !Number.isFinite(hi)) {
    // Try a Newton step first; fall back to widening steps.
    let next = cur.df < 0 ? theta - cur.f / cur.df : theta + (cur.f > 0 ? step : -step);
    if (cur.f > 0 && !(next > theta)) next = theta + step;
    if (cur.f <= 0 && !(next < theta)) next = theta - step;
    next = Math.max(theta - 4, Math.min(theta + 4, next));
    step *= 2;
    if (next < Math.log(ALPHA_MIN)) {
      const edge = score(Math.log(ALPHA_MIN));
      if (edge.f <= 0) return atBoundary(evals);
      lo = Math.log(ALPHA_MIN);
      theta = lo;
      cur = edge;
      continue;
    }
    if (next > Math.log(ALPHA_CEILING))
      throw new FitError(
        `the negative-binomial alpha grows without bound (above ${ALPHA_CEILING}); the counts are too dispersed for this model, or the model misses a major term.`,
      );
    theta = next;
    cur = score(theta);
    if (cur.f > 0) lo = Math.max(lo, theta);
    else hi = Math.min(hi, theta);
  }
  // Newton with bisection safeguard inside [lo, hi].
  for (let it = 0; it < 200; it++) {
    let next = cur.df < 0 ? theta - cur.f / cur.df : NaN;
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    const moved = Math.abs(next - theta);
    theta = next;
    cur = score(theta);
    if (cur.f > 0) lo = theta;
    else hi = theta;
    if (moved < 1e-9 || hi - lo < 1e-12) break;
  }
  const alpha = Math.exp(theta);
  // The information matrix at the estimate (a last IRLS fit from the converged point), unless only the likelihood is wanted.
  const fit = o.likelihoodOnly ? last : fitAt({ control: o.control, fixed: o.fixed, start: beta, setup, alpha });
  const { h } = alphaDerivatives(data.y, fit.mu, pw, alpha);
  const se = h < 0 ? 1 / Math.sqrt(-h) : null;
  return {
    fit,
    alpha,
    alphaStdError: se,
    logLik: negbinLogLik(data.y, fit.mu, pw, alpha),
    boundary: false,
    outerIterations: evals,
    poisson: pois ?? fit,
    poissonLogLik: pois ? poisLL : NaN,
  };
}

/** Moment starting value: Σw[(y − mu)² − y] / Σw·mu², floored. */
function momentAlpha(y: Float64Array, mu: Float64Array, pw: Float64Array | null): number {
  let num = 0,
    den = 0;
  for (let i = 0; i < y.length; i++) {
    if (!(mu[i] > 0)) continue;
    const w = pw ? pw[i] : 1;
    num += w * ((y[i] - mu[i]) ** 2 - y[i]);
    den += w * mu[i] * mu[i];
  }
  return Math.max(1e-3, num / den);
}
