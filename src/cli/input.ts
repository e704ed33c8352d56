// Reading the input of the fitting commands: the load → design stages wired
// to the options, with progress and notices on stderr.
import { buildDesign, type Design } from "../design/design.js";
import { InputError } from "../errors.js";
import { parseFormula, termVariables } from "../formula/formula.js";
import { loadTableStream } from "../io/csv.js";
import { columnLabels } from "../io/table.js";
import {
  type ModelOptions,
  parseColumnList,
  parseNa,
  parseOrder,
  parsePositive,
  parsePositiveInt,
  parseRefs,
} from "./options.js";
import { clearProgressLine, notice, readingProgress } from "./terminal.js";

export interface LoadedDesigns {
  designs: Design[];
  control: { maxIter: number; tolerance: number };
  /** Labels of the alsoRead columns on the first design's rows. */
  labels: Map<string, string[]>;
  sha256: string;
}

/**
 * Read the input and build the designs of one or more models on the rows
 * complete for all of them. The table itself is not returned, so its columns
 * can be freed before fitting.
 */
export async function loadDesigns(
  file: string | undefined,
  opts: ModelOptions,
  modelTexts: string[],
  /** Further columns to read, each with the option that names it (for messages). */
  alsoRead: { column: string; option: string }[] = [],
): Promise<LoadedDesigns> {
  const control = {
    maxIter: parsePositiveInt("--max-iter", opts.maxIter),
    tolerance: parsePositive("--tolerance", opts.tolerance),
  };
  const specs = modelTexts.map((t) => parseFormula(t, { intercept: opts.intercept }));
  const refs = parseRefs(opts.ref);
  const order = parseOrder(opts.order);
  const factors = parseColumnList(opts.factor);
  const path = file ?? "-";
  if (path === "-" && process.stdin.isTTY)
    throw new InputError("no input: give a CSV file, or pipe one in (a FILE of - reads standard input).");
  const vars = [...new Set(specs.flatMap((spec) => [spec.response, ...termVariables(spec)]))];
  const select = [
    ...vars,
    ...[opts.exposure, opts.offset, opts.weights].filter((x): x is string => !!x),
    ...Object.keys(refs),
    ...Object.keys(order),
    ...alsoRead.map((a) => a.column),
  ];
  const name = path === "-" ? "<stdin>" : path;
  const progress = opts.quiet || !process.stderr.isTTY ? undefined : readingProgress();
  const { table, sha256 } = await loadTableStream(
    path,
    { delimiter: opts.delimiter, decimalComma: opts.decimalComma, na: parseNa(opts.na), factors, select },
    progress,
  );
  if (progress) clearProgressLine();
  for (const f of factors)
    if (!table.header.includes(f))
      throw new InputError(
        `${name}: --factor column '${f}' is not in the file. The columns are ${table.header.map((h) => `'${h}'`).join(", ")}.`,
      );
  const designs = specs.map((spec) => {
    const ownRefs = Object.fromEntries(
      Object.entries(refs).filter(([k]) => termVariables(spec).includes(k) || specs.length === 1),
    );
    return buildDesign(table, spec, {
      exposure: opts.exposure,
      offset: opts.offset,
      weights: opts.weights,
      refs: ownRefs,
      order,
      complete: specs.length > 1 ? vars : undefined,
    });
  });
  for (const n of designs[0].notices) notice(opts, n);
  for (const { column, option } of alsoRead)
    if (!table.columns.has(column))
      throw new InputError(
        `${name}: ${option} column '${column}' is not in the file. The columns are ${table.header.map((h) => `'${h}'`).join(", ")}.`,
      );
  const labels = new Map(alsoRead.map(({ column }) => [column, columnLabels(table, column, designs[0].rowIndex)]));
  return { designs, control, labels, sha256 };
}
