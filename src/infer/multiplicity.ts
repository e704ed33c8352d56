// Adjusted p-values for many flags at once: Holm's (1979) step-down
// adjustment, which controls the chance of any false flag, and the step-up
// adjustment of Benjamini and Hochberg (1995), which controls the expected
// share of false flags among the flags. Missing p-values (null) stay null
// and do not count among the m tests.

export type Adjustment = "none" | "holm" | "bh";

export const ADJUSTMENTS: readonly Adjustment[] = ["none", "holm", "bh"];

/** Indices of the non-null p-values, smallest p first (ties in input order). */
function ascending(p: (number | null)[]): number[] {
  return p
    .map((v, i) => [v, i] as const)
    .filter((x): x is readonly [number, number] => x[0] !== null)
    .sort((a, b) => a[0] - b[0] || a[1] - b[1])
    .map((x) => x[1]);
}

/** Holm: with p₍₁₎ ≤ … ≤ p₍ₘ₎, adjusted p₍ᵢ₎ = max over j ≤ i of min(1, (m − j + 1)·p₍ⱼ₎). */
export function holm(p: (number | null)[]): (number | null)[] {
  const order = ascending(p);
  const m = order.length;
  const out: (number | null)[] = p.map(() => null);
  let running = 0;
  order.forEach((i, j) => {
    running = Math.max(running, Math.min(1, (m - j) * (p[i] as number)));
    out[i] = running;
  });
  return out;
}

/** Benjamini–Hochberg: adjusted p₍ᵢ₎ = min over j ≥ i of min(1, m/j·p₍ⱼ₎). */
export function benjaminiHochberg(p: (number | null)[]): (number | null)[] {
  const order = ascending(p);
  const m = order.length;
  const out: (number | null)[] = p.map(() => null);
  let running = 1;
  for (let j = m - 1; j >= 0; j--) {
    const i = order[j];
    running = Math.min(running, Math.min(1, (m / (j + 1)) * (p[i] as number)));
    out[i] = running;
  }
  return out;
}

export function adjust(p: (number | null)[], how: Adjustment): (number | null)[] {
  return how === "holm" ? holm(p) : how === "bh" ? benjaminiHochberg(p) : [...p];
}

export function adjustmentName(how: Adjustment): string {
  return how === "holm" ? "Holm (1979)" : how === "bh" ? "Benjamini–Hochberg (1995)" : "none";
}
