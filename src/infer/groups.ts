// Observed against expected by group (--summary-by), with exact limits.
import { garwoodInterval } from "./garwood.js";

export interface GroupRow {
  group: string;
  rows: number;
  observed: number;
  expected: number;
  /** O/E with the exact (Garwood 1936) interval for the observed count, divided by the expected. */
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
): GroupSummary {
  const acc = new Map<string, { rows: number; o: number; e: number; x: number }>();
  for (let i = 0; i < labels.length; i++) {
    const o = observed[i];
    if (Number.isNaN(o)) continue;
    const a = acc.get(labels[i]) ?? { rows: 0, o: 0, e: 0, x: 0 };
    a.rows++;
    a.o += o;
    a.e += expected[i];
    a.x += exposure ? exposure[i] : 0;
    acc.set(labels[i], a);
  }
  const groups = [...acc.entries()]
    .sort((a, b) => order(a[0], b[0]))
    .map(([group, a]) => {
      const ci = garwoodInterval(a.o, level);
      return {
        group,
        rows: a.rows,
        observed: a.o,
        expected: a.e,
        ratio: a.e > 0 ? a.o / a.e : null,
        ratio_ci: a.e > 0 ? ([ci[0] / a.e, ci[1] / a.e] as [number, number]) : null,
        exposure: exposure ? a.x : null,
        crude_rate: exposure && a.x > 0 ? (a.o / a.x) * per : null,
      };
    });
  return { column, per, level, groups };
}
