// Profile-likelihood limits of an excess-zero fit's coefficients (both parts).
import type { Design } from "../design/design.js";
import { brentRoot } from "../math/roots.js";
import { conditionedRows } from "./gee-rows.js";
import type { ZeroFit, ZeroFitOptions } from "./zero-fit.js";
import { isNegbinForm } from "./zero-likelihood.js";
import { bfgs, columnsOf, evaluate, polish, type Problem } from "./zero-optimize.js";

export interface ZeroProfile {
  /** Limits on the original log scale (null: not found), and how each side came out. */
  lower: number | null;
  upper: number | null;
  status: { lower: "limit" | "open" | "failed"; upper: "limit" | "open" | "failed" };
}

/**
 * Profile-likelihood limits of the non-intercept coefficients of both parts
 * (the intercepts absorb the centring, so they keep Wald limits): each
 * coefficient is held at a value and the others maximised again (BFGS and
 * Newton from the estimate), and the limits are where 2·(ℓ̂ − ℓ) crosses the
 * chi-square(1) quantile, found by Brent's method after bracketing outward
 * from the estimate.
 */
export function profileZeroModel(
  count: Design,
  zero: Design,
  o: ZeroFitOptions,
  z: ZeroFit,
  crit: number,
): Map<string, ZeroProfile> {
  const rows = Int32Array.from({ length: count.n }, (_, i) => i);
  const X = conditionedRows(count, o.countColumns, rows);
  const Z = conditionedRows(zero, o.zeroColumns, rows);
  const nb = isNegbinForm(o.family);
  const p = X.q,
    r = Z.q;
  const m = p + r + (nb ? 1 : 0);
  const theta0 = new Float64Array(m);
  theta0.set(X.fromOriginal(z.beta), 0);
  theta0.set(Z.fromOriginal(z.gamma), p);
  if (nb) theta0[p + r] = Math.log(z.alpha);
  const base: Problem = { X, Z, y: count.y, off: count.offset, w: count.weights, family: o.family, nb };
  const ll0 = -evaluate(base, theta0, null);
  const tx = columnsOf(X, p),
    tz = columnsOf(Z, r);
  const out = new Map<string, ZeroProfile>();
  const targets: { key: string; index: number; scale: number }[] = [];
  const countIc = count.matrix.interceptCol >= 0 ? o.countColumns.indexOf(count.matrix.interceptCol) : -1;
  const zeroIc = zero.matrix.interceptCol >= 0 ? o.zeroColumns.indexOf(zero.matrix.interceptCol) : -1;
  for (let k = 0; k < p; k++) if (k !== countIc) targets.push({ key: `count:${k}`, index: k, scale: tx[k * p + k] });
  if (!z.boundary.zeroPart)
    for (let k = 0; k < r; k++)
      if (k !== zeroIc) targets.push({ key: `zero:${k}`, index: p + k, scale: tz[k * r + k] });
  for (const t of targets) {
    const P: Problem = { ...base, fixed: t.index };
    const theta = new Float64Array(theta0);
    // 2(ℓ̂ − ℓ(g)) − crit with the other parameters maximised again, started from the last constrained fit.
    // NaN when the constrained maximum is not reached (the side then fails rather than report a false crossing).
    const deficit = (g: number) => {
      theta[t.index] = g;
      bfgs(P, theta, 300);
      if (!polish(P, theta)) return Number.NaN;
      return 2 * (ll0 + evaluate(P, theta, null)) - crit;
    };
    const g0 = theta0[t.index];
    const v = z.covariance ? z.covariance.data[t.index * z.covariance.p + t.index] : Number.NaN;
    const seG = v > 0 ? Math.sqrt(v) / Math.abs(t.scale) : 1;
    const side = (dir: 1 | -1): { value: number | null; status: "limit" | "open" | "failed" } => {
      theta.set(theta0);
      let a = g0,
        fa = -crit;
      // Outward in steps of one Wald half-width, then wider, until the deficit turns positive.
      const step = seG * Math.sqrt(crit);
      let b = g0 + dir * step;
      let fb = deficit(b);
      for (let e = 1; e < 40 && fb < 0; e++) {
        a = b;
        fa = fb;
        b = g0 + dir * step * (e < 10 ? e + 1 : 10 * 1.5 ** (e - 9));
        // Thirty on the log scale (a ratio of about 1e13) is as far as a limit is sought: beyond it the side is open.
        if (Math.abs((b - g0) * t.scale) > 30) return { value: null, status: "open" };
        fb = deficit(b);
      }
      if (!(fb >= 0)) return { value: null, status: "failed" };
      try {
        const g = brentRoot(deficit, a, b, 1e-10 * (1 + Math.abs(g0)), 100, fa, fb);
        return { value: g * t.scale, status: "limit" };
      } catch {
        return { value: null, status: "failed" };
      }
    };
    const lo = side(-1),
      hi = side(1);
    // With a negative scale the sides swap; the scale of a centred column is positive.
    out.set(t.key, { lower: lo.value, upper: hi.value, status: { lower: lo.status, upper: hi.status } });
  }
  return out;
}
