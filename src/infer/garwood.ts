// Exact interval for the mean of a Poisson count.
import { chiSquareQuantile } from "../math/distributions.js";

/**
 * Exact (Garwood 1936) limits for the mean of a Poisson count y:
 * [χ²(α/2; 2y)/2, χ²(1 − α/2; 2y + 2)/2], with the lower limit 0 at y = 0.
 */
export function garwoodInterval(y: number, level = 0.95): [number, number] {
  const a = 1 - level;
  const lo = y === 0 ? 0 : chiSquareQuantile(a / 2, 2 * y) / 2;
  const hi = chiSquareQuantile(1 - a / 2, 2 * y + 2) / 2;
  return [lo, hi];
}
