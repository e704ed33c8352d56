// A loaded table as plain data that deepEqual compares: header, rows, and each
// column's values (NaN written out) or levels and codes, with why a column is
// a factor when asked.
import type { FactorColumn, Table } from "../../src/io/table.js";

export interface ColumnSnapshot {
  name: string;
  kind: "numeric" | "factor";
  values?: (number | "NaN")[];
  levels?: string[];
  codes?: number[];
  reason?: FactorColumn["reason"];
}

export function snapshot(
  t: Table,
  o: { reasons?: boolean } = {},
): {
  header: string[];
  nRows: number;
  columns: ColumnSnapshot[];
} {
  return {
    header: t.header,
    nRows: t.nRows,
    columns: [...t.columns.values()].map((c) =>
      c.kind === "numeric"
        ? { name: c.name, kind: c.kind, values: [...c.values].map((v) => (Number.isNaN(v) ? "NaN" : v)) }
        : {
            name: c.name,
            kind: c.kind,
            levels: c.levels,
            codes: [...c.codes],
            ...(o.reasons ? { reason: c.reason } : {}),
          },
    ),
  };
}
