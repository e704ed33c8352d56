// Working correlations of generalized estimating equations (Liang and Zeger
// 1986): the structure R(ρ) of the counts within one cluster, its inverse
// applied in O(n) per cluster, and the moment estimate of ρ from Pearson
// residuals (Liang and Zeger 1986, §4).

/** independence: R = I; exchangeable: every pair ρ; ar1: ρ^|j − k| along the cluster's order. */
export type WorkingCorrelation = "independence" | "exchangeable" | "ar1";

export const WORKING_CORRELATIONS: readonly WorkingCorrelation[] = ["independence", "exchangeable", "ar1"];

/**
 * out ← R(ρ)⁻¹ z for one cluster of size n, where z and out hold `width`
 * interleaved vectors (row j of the cluster at z[j·width … j·width + width − 1]).
 * Exchangeable: R⁻¹ = (I − c·J)/(1 − ρ) with c = ρ/(1 + (n − 1)ρ).
 * AR(1): R⁻¹ is tridiagonal, (1/(1 − ρ²))·[1, 1 + ρ², …, 1 + ρ², 1] on the
 * diagonal and −ρ/(1 − ρ²) beside it (e.g. Diggle, Heagerty, Liang and Zeger,
 * Analysis of Longitudinal Data, 2nd ed., §4.2).
 */
export function applyInverse(
  structure: WorkingCorrelation,
  rho: number,
  n: number,
  width: number,
  z: Float64Array,
  out: Float64Array,
): void {
  if (structure === "independence" || n === 1 || rho === 0) {
    out.set(z.subarray(0, n * width));
    return;
  }
  if (structure === "exchangeable") {
    const c = rho / (1 + (n - 1) * rho);
    const f = 1 / (1 - rho);
    for (let k = 0; k < width; k++) {
      let s = 0;
      for (let j = 0; j < n; j++) s += z[j * width + k];
      for (let j = 0; j < n; j++) out[j * width + k] = f * (z[j * width + k] - c * s);
    }
    return;
  }
  const f = 1 / (1 - rho * rho);
  for (let k = 0; k < width; k++)
    for (let j = 0; j < n; j++) {
      const d = j === 0 || j === n - 1 ? 1 : 1 + rho * rho;
      let v = d * z[j * width + k];
      if (j > 0) v -= rho * z[(j - 1) * width + k];
      if (j < n - 1) v -= rho * z[(j + 1) * width + k];
      out[j * width + k] = f * v;
    }
}

/**
 * The moment estimate of ρ from Pearson residuals e (in cluster order, the
 * clusters at `starts`), divided by the scale φ: exchangeable, the mean
 * product over all pairs within a cluster; AR(1), over neighbouring pairs
 * (Liang and Zeger 1986, §4, without their −p correction of the divisor).
 * null when no cluster has two rows.
 */
export function momentCorrelation(
  structure: WorkingCorrelation,
  e: Float64Array,
  starts: Int32Array,
  phi: number,
): number | null {
  if (structure === "independence") return 0;
  let sum = 0;
  let pairs = 0;
  for (let g = 0; g + 1 < starts.length; g++) {
    const a = starts[g];
    const b = starts[g + 1];
    const n = b - a;
    if (n < 2) continue;
    if (structure === "exchangeable") {
      let s = 0;
      let s2 = 0;
      for (let j = a; j < b; j++) {
        s += e[j];
        s2 += e[j] * e[j];
      }
      sum += (s * s - s2) / 2;
      pairs += (n * (n - 1)) / 2;
    } else {
      for (let j = a; j + 1 < b; j++) sum += e[j] * e[j + 1];
      pairs += n - 1;
    }
  }
  return pairs > 0 ? sum / (pairs * phi) : null;
}

/**
 * The range of ρ in which R(ρ) is positive definite for clusters of at most
 * nMax rows, pulled in by a margin: exchangeable (−1/(nMax − 1), 1), AR(1) (−1, 1).
 */
export function admissibleRange(structure: WorkingCorrelation, nMax: number): [number, number] {
  const margin = 1e-6;
  if (structure === "exchangeable") return [nMax > 1 ? -1 / (nMax - 1) + margin : -1 + margin, 1 - margin];
  return [-1 + margin, 1 - margin];
}
