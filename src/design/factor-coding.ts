// Factor coding: the levels present among the rows used, in natural order or
// the order given, and the reference level (by default the first with events).
import { rowArray } from "../math/shared-arrays.js";
import { InputError } from "../errors.js";
import type { FactorColumn, Table } from "../io/table.js";
import { closestName, listNames, naturalCompare } from "./naming.js";

export interface FactorCoding {
  name: string;
  /** Levels present among the rows used, in natural order (or the --order given). */
  levels: string[];
  reference: string;
}

export function codeFactor(
  table: Table,
  c: FactorColumn,
  rowIndex: Int32Array,
  ref: string | undefined,
  order: string[] | undefined,
  y: Float64Array,
): { coding: FactorCoding; codes: Int32Array; notice: string | null } {
  const present = new Uint8Array(c.levels.length);
  const events = new Float64Array(c.levels.length);
  for (let k = 0; k < rowIndex.length; k++) {
    const code = c.codes[rowIndex[k]];
    present[code] = 1;
    events[code] += y[rowIndex[k]];
  }
  const natural = c.levels.filter((_, i) => present[i]).sort(naturalCompare);
  for (const l of order ?? [])
    if (!natural.includes(l)) {
      const close = closestName(l, natural);
      throw new InputError(
        `--order ${c.name}=…: '${l}' is not a level of '${c.name}' among the rows used.${close ? ` Did you mean '${close}'?` : ""} The levels are ${listNames(natural, 30)}.`,
      );
    }
  const levels = order ? [...order, ...natural.filter((l) => !order.includes(l))] : natural;
  if (ref !== undefined && !levels.includes(ref)) {
    const close = closestName(ref, levels);
    throw new InputError(
      `--ref ${c.name}=${ref}: '${ref}' is not a level of '${c.name}' among the rows used.${close ? ` Did you mean '${close}'?` : ""} The levels are ${listNames(levels, 30)}.`,
    );
  }
  if (levels.length < 2) {
    throw new InputError(
      `${table.source}: factor '${c.name}' has a single level ('${levels[0]}') among the rows used, so it cannot explain any difference; remove it from the model.`,
    );
  }
  // Default reference: the first level (in the order above) that has events; a level without events would make
  // every rate ratio against it infinite. An explicit --ref is kept as given (the fit then says why it fails).
  const eventsOf = (l: string) => events[c.levels.indexOf(l)];
  let reference = ref ?? levels[0];
  let notice: string | null = null;
  if (ref === undefined && !(eventsOf(levels[0]) > 0)) {
    const first = levels.find((l) => eventsOf(l) > 0);
    if (first !== undefined) {
      reference = first;
      notice = `the first level of '${c.name}', '${levels[0]}', has no events, so '${first}' is the reference level (choose another with --ref ${c.name}=LEVEL)`;
    }
  }
  const pos = new Map(levels.map((l, i) => [l, i]));
  const remap = c.levels.map((l) => pos.get(l) ?? -1);
  const codes = rowArray(Int32Array, rowIndex.length);
  for (let k = 0; k < rowIndex.length; k++) codes[k] = remap[c.codes[rowIndex[k]]];
  return { coding: { name: c.name, levels, reference }, codes, notice };
}

/** The name of a factor whose levels look like dates (YYYY-MM-DD, YYYY-MM, YYYY-Www), or null. */
export function datesAmong(factors: Map<string, { coding: FactorCoding }>): string | null {
  for (const [name, f] of factors)
    if (f.coding.levels.length > 2 && f.coding.levels.every((l) => /^\d{4}-\d{2}(-\d{2})?$|^\d{4}-W\d{2}$/.test(l)))
      return name;
  return null;
}
