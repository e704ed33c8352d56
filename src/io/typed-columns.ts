// Typed columns from a database's result columns (DuckDB, PostgreSQL): the
// same Table a CSV gives. A column the engine types as a number is numeric
// (unless --factor names it); any other value is text and the column a factor
// with levels in order of first appearance; NULL is a missing value.
import { createHash } from "node:crypto";
import type { Column, Table } from "./table.js";

export function typedTable(
  source: string,
  header: string[],
  names: string[],
  numeric: boolean[],
  columns: unknown[][],
  options: { factors?: string[] },
): Table {
  const forced = new Set(options.factors ?? []);
  const map = new Map<string, Column>();
  const n = columns[0]?.length ?? 0;
  names.forEach((name, j) => {
    const values = columns[j];
    if (numeric[j] && !forced.has(name)) {
      const out = new Float64Array(n);
      for (let i = 0; i < n; i++) {
        const v = values[i];
        // Wide integers and decimals arrive as bigint or text: Number() reads both.
        out[i] = v === null || v === undefined ? Number.NaN : Number(v as number | bigint | string);
      }
      map.set(name, { kind: "numeric", name, values: out });
      return;
    }
    const levels: string[] = [];
    const index = new Map<string, number>();
    const codes = new Int32Array(n);
    let first: { row: number; value: string } | null = null;
    for (let i = 0; i < n; i++) {
      const v = values[i];
      if (v === null || v === undefined) {
        codes[i] = -1;
        continue;
      }
      const t = String(v);
      first ??= { row: i + 2, value: t };
      let code = index.get(t);
      if (code === undefined) {
        code = levels.length;
        index.set(t, code);
        levels.push(t);
      }
      codes[i] = code;
    }
    map.set(name, {
      kind: "factor",
      name,
      codes,
      levels,
      reason: forced.has(name) || !first ? { forced: true } : { forced: false, ...first },
    });
  });
  return { source, header, nRows: n, columns: map, delimiter: "," };
}

/** The digest of the rows read (not of a file): the same query on the same data gives the same digest. */
export function rowsDigest(table: Table): string {
  const hash = createHash("sha256");
  for (const name of table.header) hash.update(`${name}\u0000`);
  for (const col of table.columns.values())
    hash.update(
      col.kind === "numeric"
        ? new Uint8Array(col.values.buffer, col.values.byteOffset, col.values.byteLength)
        : `${col.levels.join("\u0000")}|${col.codes.join(",")}`,
    );
  return hash.digest("hex");
}
