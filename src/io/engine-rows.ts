// The rows of an engine's source into the same typed columns as a CSV: only
// the model's columns are selected (quoted), every other column still named in
// the header so that a missing one is reported with the full list.
import { InputError } from "../errors.js";
import type { Engine } from "./engine.js";
import type { Table } from "./table.js";
import { typedTable } from "./typed-columns.js";

/** Every column name of the engine's source (one query that returns no rows). */
export async function headerOf(engine: Engine): Promise<string[]> {
  return (await engine.run(`SELECT * FROM ${engine.from} LIMIT 0`)).names;
}

export async function loadEngineRows(
  engine: Engine,
  options: { factors?: string[]; select?: string[] },
  empty: string,
): Promise<Table> {
  const header = await headerOf(engine);
  const have = new Set(header);
  const wanted = [...new Set(options.select ?? [])].filter((s) => have.has(s));
  const list = wanted.length ? wanted.map(engine.quote).join(", ") : "*";
  const r = await engine.run(`SELECT ${list} FROM ${engine.from}`);
  const table = typedTable(engine.source, header, r.names, r.numeric, r.columns, options);
  if (table.nRows === 0) throw new InputError(empty);
  table.origin = { engine: engine.engine, queries: engine.queries, rows_transferred: table.nRows };
  return table;
}
