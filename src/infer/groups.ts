// Observed against expected by group (--summary-by), with limits for O/E
// that follow the fitted family (see ratio-limits.ts).
import { type CountSpread, ratioLimits, spreadMethod } from "./ratio-limits.js";

export interface GroupRow {
  group: string;
  rows: number;
  observed: number;
  expected: number;
  /** O/E with its interval under the fitted family (GroupSummary.method). */
  ratio: number | null;
  ratio_ci: [number, number] | null;
  exposure: number | null;
  /** Observed count per `per` units of exposure. */
  crude_rate: number | null;
}

export interface GroupSummary {
  column: string;
  per: number;
  level: number;
  /** How the O/E limits were computed (they follow the fitted family). */
  method: string;
  groups: GroupRow[];
}

export function summarizeGroups(
  column: string,
  labels: string[],
  observed: ArrayLike<number>,
  expected: ArrayLike<number>,
  exposure: ArrayLike<number> | null,
  per: number,
  level: number,
  order: (a: string, b: string) => number,
  spread: CountSpread = { family: "poisson" },
): GroupSummary {
  const acc = new Map<string, { rows: number; o: number; e: number; e2: number; x: number }>();
  for (let i = 0; i < labels.length; i++) {
    const o = observed[i];
    if (Number.isNaN(o)) continue;
    const a = acc.get(labels[i]) ?? { rows: 0, o: 0, e: 0, e2: 0, x: 0 };
    a.rows++;
    a.o += o;
    a.e += expected[i];
    a.e2 += expected[i] * expected[i];
    a.x += exposure ? exposure[i] : 0;
    acc.set(labels[i], a);
  }
  const groups = [...acc.entries()]
    .sort((a, b) => order(a[0], b[0]))
    .map(([group, a]) => {
      const ci = a.e > 0 ? ratioLimits(a.o, a.e, a.e2, spread, level) : null;
      return {
        group,
        rows: a.rows,
        observed: a.o,
        expected: a.e,
        ratio: a.e > 0 ? a.o / a.e : null,
        ratio_ci: ci,
        exposure: exposure ? a.x : null,
        crude_rate: exposure && a.x > 0 ? (a.o / a.x) * per : null,
      };
    });
  return { column, per, level, method: spreadMethod(spread), groups };
}
