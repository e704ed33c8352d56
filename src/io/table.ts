// Plain typed records for a loaded table: columns as typed arrays.

/** A column whose every present value is a finite number; NaN marks a missing value. */
export interface NumericColumn {
  kind: "numeric";
  name: string;
  values: Float64Array;
}

/** A categorical column: level codes (−1 = missing) into `levels` (in order of first appearance). */
export interface FactorColumn {
  kind: "factor";
  name: string;
  codes: Int32Array;
  levels: string[];
  /** Why the column is a factor: forced by the user, or the first value that is not a finite number. */
  reason: { forced: true } | { forced: false; row: number; value: string };
}

export type Column = NumericColumn | FactorColumn;

/** The engine that read a table's rows (a gzip CSV, Parquet, a database), as the JSON's source block reports it. */
export interface SourceOrigin {
  engine: "csv.gz" | "parquet" | "duckdb" | "postgres" | "clickhouse";
  /** Queries run against the engine (0 for a file read without one). */
  queries: number;
  /** Rows the engine sent to tallyfit. */
  rows_transferred: number;
  /** How the rows were merged inside the engine (push-down), when they were. */
  aggregation?: "covariate patterns" | "count patterns" | "per-iteration sums";
}

export interface Table {
  /** Display name of the source: the path, or "<stdin>". */
  source: string;
  /** Column names in header order. */
  header: string[];
  /** Number of data rows (the header is row 1, so data row i is file row i + 2). */
  nRows: number;
  /** The selected columns (all columns when no selection was given). */
  columns: Map<string, Column>;
  delimiter: string;
  /** Where the rows came from when not a plain CSV: the engine that read them, its queries and the rows it sent. */
  origin?: SourceOrigin;
  /** Every data row's fields as read (only when the reader was asked to keep them). */
  records?: string[][];
}

/** A header must name every column once: empty and repeated names are input errors. */
export function checkHeader(header: string[], source: string, fail: (message: string) => Error): void {
  const seen = new Map<string, number>();
  header.forEach((h, j) => {
    if (h === "")
      throw fail(
        `${source}, row 1: column ${j + 1} of ${header.length} has no name${j === header.length - 1 ? " (a delimiter at the end of the header line?)" : ""}; give every column a name in the header.`,
      );
    if (seen.has(h))
      throw fail(
        `${source}, row 1: column name '${h}' appears twice (columns ${seen.get(h)! + 1} and ${j + 1}); give every column its own name.`,
      );
    seen.set(h, j);
  });
}

/** File row number (1-based, header = row 1) of data row index i (0-based). */
export function fileRow(i: number): number {
  return i + 2;
}

/** Labels of some rows of a column: factor levels, or numbers as written by String(); "(missing)" for a missing value. */
export function columnLabels(table: Table, column: string, rows: ArrayLike<number>): string[] {
  const c = table.columns.get(column)!;
  const out: string[] = new Array(rows.length);
  for (let k = 0; k < rows.length; k++) {
    const i = rows[k];
    if (c.kind === "factor") out[k] = c.codes[i] < 0 ? "(missing)" : c.levels[c.codes[i]];
    else out[k] = Number.isNaN(c.values[i]) ? "(missing)" : String(c.values[i]);
  }
  return out;
}

/** The table restricted to some rows (kept in order); `rows` of the result index the original rows. */
export function tableRows(table: Table, rows: Int32Array): Table {
  const columns = new Map<string, Column>();
  for (const [name, c] of table.columns)
    columns.set(
      name,
      c.kind === "numeric"
        ? { ...c, values: Float64Array.from(rows, (i) => c.values[i]) }
        : { ...c, codes: Int32Array.from(rows, (i) => c.codes[i]) },
    );
  return {
    ...table,
    nRows: rows.length,
    columns,
    ...(table.records ? { records: Array.from(rows, (i) => table.records![i]) } : {}),
  };
}
