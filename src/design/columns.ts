// Finding the columns a model uses in a table, with one message for each
// mistake: a name that is not in the file (with the nearest name and, when the
// whole header landed in one column, the delimiter it seems to use), and a
// column that must be numeric but is not.
import { InputError } from "../errors.js";
import { guessDelimiter, showDelimiter } from "../io/dialect.js";
import type { Column, Table } from "../io/table.js";
import { closestName, listNames } from "./naming.js";

/** The column called name; role says what it is for ("count", "exposure", "model", "--ref", …). */
export function lookupColumn(table: Table, name: string, role: string): Column {
  const c = table.columns.get(name);
  if (c) return c;
  const known = table.header.filter((h) => h !== "");
  const close = closestName(name, known);
  let msg = `${table.source}: ${role} column '${name}' is not in the file.`;
  if (close) msg += ` Did you mean '${close}'?`;
  msg += ` The columns are ${listNames(known)}.`;
  if (known.length === 1) {
    const guess = guessDelimiter(known[0], table.delimiter);
    if (guess)
      msg += ` The whole header landed in one column, so the file probably uses ${showDelimiter(guess)} between fields, not ${showDelimiter(table.delimiter)}: try --delimiter ${guess === "\t" ? "tab" : `'${guess}'`}${guess === ";" ? " (and --decimal-comma if its numbers are written 1,5)" : ""}.`;
  }
  throw new InputError(msg);
}

/** A column's numbers, or an error naming the first value that is not a finite number. */
export function numericColumn(
  table: Table,
  col: Column,
  role: string,
  forcedWhy = "it was listed in --factor",
): Float64Array {
  if (col.kind === "numeric") return col.values;
  const why = col.reason.forced
    ? forcedWhy
    : `row ${col.reason.row} holds '${col.reason.value}', which is not a finite number`;
  const value = col.reason.forced ? "" : col.reason.value;
  const range = /^[+-]?(\d+\.?\d*|\.\d+)[eE][+-]?\d+$/.test(value)
    ? " (it is beyond the range of a double-precision number)"
    : "";
  const comma =
    !col.reason.forced && /^[+-]?\d*,\d+$/.test(col.reason.value)
      ? ` It looks like a decimal comma: add --decimal-comma${table.delimiter === "," ? " with the file's own --delimiter (such as ';')" : ""}.`
      : "";
  throw new InputError(
    `${table.source}: the ${role} column '${col.name}' must be numeric, but ${why}${range}.${comma}`,
  );
}
