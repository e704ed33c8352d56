// The table a design is built from when its rows stay in the engine (fits by
// per-iteration sums): one row per factor level, and enough copies of them
// for the design to have more rows than columns. A level's row counts an event
// exactly when the level has events among the rows used, and the other
// factors of that row sit at a level with events, so the design picks the same
// levels and reference levels as it would from the rows. Numeric columns hold
// their means over the rows used.
import type { Column, Table } from "../io/table.js";

export interface LevelEvents {
  factor: string;
  /** Each level present among the rows used, with its events (Σ w·y). */
  levels: { level: string; events: number }[];
}

export function skeletonTable(
  source: string,
  response: string,
  factors: LevelEvents[],
  means: Map<string, number>,
  columns: number,
  /** Every column name of the source (the table holds only the model's). */
  header: string[],
): Table {
  const base: { factor: number; level: number; event: boolean }[] = [];
  factors.forEach((f, j) => f.levels.forEach((l, k) => base.push({ factor: j, level: k, event: l.events > 0 })));
  if (base.length === 0) base.push({ factor: -1, level: 0, event: true });
  const copies = Math.ceil((columns + 1) / base.length);
  const n = base.length * copies;
  const withEvents = factors.map((f) =>
    Math.max(
      0,
      f.levels.findIndex((l) => l.events > 0),
    ),
  );
  const map = new Map<string, Column>();
  const y = new Float64Array(n);
  factors.forEach((f, j) => {
    const codes = new Int32Array(n);
    for (let i = 0; i < n; i++) {
      const b = base[i % base.length];
      codes[i] = b.factor === j ? b.level : withEvents[j];
    }
    map.set(f.factor, {
      kind: "factor",
      name: f.factor,
      codes,
      levels: f.levels.map((l) => l.level),
      reason: { forced: true },
    });
  });
  for (let i = 0; i < n; i++) y[i] = base[i % base.length].event ? 1 : 0;
  map.set(response, { kind: "numeric", name: response, values: y });
  for (const [name, m] of means) map.set(name, { kind: "numeric", name, values: new Float64Array(n).fill(m) });
  return { source, header, nRows: n, columns: map, delimiter: "," };
}
