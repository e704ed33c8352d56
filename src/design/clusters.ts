// Groupings of the design's rows for clustered counts: which cluster each row
// belongs to (--cluster), and the order of the rows within a cluster
// (--order-by), both from a column's labels on the rows used.
import { InputError } from "../errors.js";
import { fileRow } from "../io/table.js";
import { naturalCompare } from "./naming.js";

/** A clustering of the design's rows: ids[i] in 0 … count − 1. */
export interface Clustering {
  column: string;
  ids: Int32Array;
  count: number;
  /** The clusters' names, by id (for messages). */
  names?: string[];
}

/** A clustering from a column's labels (a missing label is a cluster of its own); one cluster is an input error. */
export function clusteringOf(column: string, labels: string[]): Clustering {
  const index = new Map<string, number>();
  const ids = Int32Array.from(labels, (l) => {
    let id = index.get(l);
    if (id === undefined) {
      id = index.size;
      index.set(l, id);
    }
    return id;
  });
  if (index.size < 2)
    throw new InputError(
      `--cluster ${column}: every row used is in one cluster ('${labels[0] ?? ""}'); clustered standard errors need at least 2 clusters (and about 30 to be reliable).`,
    );
  return { column, ids, count: index.size, names: [...index.keys()] };
}

/** The intersection of two clusterings (a clinic-week), numbered in order of first appearance. */
export function clusterIntersection(
  a: Pick<Clustering, "ids" | "count"> & { column?: string },
  b: Pick<Clustering, "ids" | "count"> & { column?: string },
): Clustering {
  const ids = new Int32Array(a.ids.length);
  const seen = new Map<number, number>();
  for (let i = 0; i < ids.length; i++) {
    if (a.ids[i] < 0 || b.ids[i] < 0) {
      ids[i] = -1;
      continue;
    }
    const key = a.ids[i] * b.count + b.ids[i];
    let id = seen.get(key);
    if (id === undefined) {
      id = seen.size;
      seen.set(key, id);
    }
    ids[i] = id;
  }
  return { column: `${a.column ?? ""}:${b.column ?? ""}`, ids, count: seen.size };
}

const MISSING = "(missing)";

/**
 * A sort key of the rows from the order column's labels: the numbers when
 * every label is a number, else the labels' natural order (so ISO dates,
 * weeks like 2026-W07 and labels like day9, day10 sort as a reader expects).
 * A missing value, or two rows of one cluster at the same place in the
 * order, is an input error naming the file rows.
 */
export function orderKeyOf(
  column: string,
  labels: string[],
  rowIndex: Int32Array,
  clustering: Clustering,
  source: string,
): Float64Array {
  const missing = labels.indexOf(MISSING);
  if (missing >= 0)
    throw new InputError(
      `${source}, row ${fileRow(rowIndex[missing])}, column '${column}': the order column has no value; every row of a cluster needs its place in the order.`,
    );
  const numbers = labels.map(Number);
  let key: Float64Array;
  if (numbers.every(Number.isFinite)) key = Float64Array.from(numbers);
  else {
    const sorted = [...new Set(labels)].sort(naturalCompare);
    const rank = new Map(sorted.map((l, k) => [l, k]));
    key = Float64Array.from(labels, (l) => rank.get(l)!);
  }
  const seen = new Map<string, number>();
  for (let i = 0; i < key.length; i++) {
    const k = `${clustering.ids[i]}|${key[i]}`;
    const j = seen.get(k);
    if (j !== undefined)
      throw new InputError(
        `${source}, rows ${fileRow(rowIndex[j])} and ${fileRow(rowIndex[i])}, column '${column}': both rows of ${clustering.column} '${clustering.names?.[clustering.ids[i]] ?? clustering.ids[i]}' are at '${labels[i]}'; the order within a cluster must not repeat (aggregate them first, or order by a finer column).`,
      );
    seen.set(k, i);
  }
  return key;
}
