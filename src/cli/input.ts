// Reading the input of the fitting commands: the load → design stages wired
// to the options, with progress and notices on stderr.
import { buildDesign, type Design } from "../design/design.js";
import { InputError } from "../errors.js";
import { parseFormula, termVariables } from "../formula/formula.js";
import { loadTableStream } from "../io/csv.js";
import { loadDuckDbQuery, loadParquet } from "../io/duckdb-table.js";
import { loadPostgresQuery } from "../io/postgres-table.js";
import { loadClickHouseQuery } from "../io/clickhouse-table.js";
import { columnLabels, type Table } from "../io/table.js";
import type { PushDownKey } from "../io/push-down.js";
import { collapsedDesign } from "../design/collapsed.js";
import { readPatterns, readThroughEngine } from "./engine-input.js";
import { unknownDatabase } from "../io/open-engine.js";
import type { SumsSource } from "../io/engine-sums.js";
import {
  type Calendar,
  type CalendarOptions,
  calendarTerms,
  dayRange,
  daysOf,
  MAX_HARMONICS,
  withCalendarColumns,
  withCalendarTerms,
} from "../design/calendar.js";
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
import { collectAfterStage } from "../math/collect.js";

export interface LoadedDesigns {
  designs: Design[];
  control: { maxIter: number; tolerance: number };
  /** Labels of the alsoRead columns on the first design's rows. */
  labels: Map<string, string[]>;
  sha256: string;
  /** Set when the rows stay in the engine and the fit runs on per-iteration sums. */
  sums?: SumsSource;
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
  /**
   * How rows may be merged inside an engine that holds them (a Parquet file,
   * --db): by covariate pattern (Poisson sums) or with the count and exposure
   * in the key (exact for every family). Null: read the rows.
   */
  pushDownKey: PushDownKey | null = null,
): Promise<LoadedDesigns> {
  const control = {
    maxIter: parsePositiveInt("--max-iter", opts.maxIter),
    tolerance: parsePositive("--tolerance", opts.tolerance),
  };
  const calendar = calendarOptionsOf(opts);
  const mainTerms = (t: string) =>
    parseFormula(t, { intercept: opts.intercept })
      .terms.filter((term) => term.variables.length === 1)
      .map((term) => term.variables[0]);
  const texts = calendar ? modelTexts.map((t) => withCalendarTerms(t, calendar, mainTerms(t))) : modelTexts;
  const specs = texts.map((t) => parseFormula(t, { intercept: opts.intercept }));
  const refs = parseRefs(opts.ref);
  const orderGiven = parseOrder(opts.order);
  const factors = parseColumnList(opts.factor);
  const path = file ?? "-";
  if (opts.db && file) throw new InputError(`give the data once: a FILE (${file}) or --db with --sql, not both.`);
  if (!!opts.db !== !!opts.sql)
    throw new InputError(
      opts.db ? "--db needs --sql QUERY: the query whose rows are the data." : "--sql needs --db URL.",
    );
  if (path === "-" && process.stdin.isTTY && !opts.db)
    throw new InputError("no input: give a CSV file, or pipe one in (a FILE of - reads standard input).");
  const generated = calendar ? calendarTerms(calendar) : [];
  const vars = [...new Set(specs.flatMap((spec) => [spec.response, ...termVariables(spec)]))];
  const select = [
    ...vars.filter((v) => !generated.includes(v)),
    ...[opts.exposure, opts.offset, opts.weights, calendar?.column].filter((x): x is string => !!x),
    ...Object.keys(refs),
    ...Object.keys(orderGiven).filter((v) => !generated.includes(v)),
    ...alsoRead.map((a) => a.column),
  ];
  const name = path === "-" ? "<stdin>" : path;
  const progress = opts.quiet || !process.stderr.isTTY ? undefined : readingProgress();
  const responses = new Set(specs.map((s) => s.response));
  // Only a model file records the input's digest (reading it costs a pass over the bytes, on one thread).
  const wantDigest = !!(opts as { saveModel?: string }).saveModel;
  const pushed =
    pushDownKey &&
    !calendar &&
    alsoRead.length === 0 &&
    responses.size === 1 &&
    opts.mergePatterns !== "never" &&
    readThroughEngine(path, opts)
      ? await readPatterns(
          path,
          opts,
          { response: specs[0].response, keys: vars.filter((v) => !responses.has(v)), factors },
          pushDownKey,
          wantDigest,
        )
      : null;
  const { table: read, sha256 } = pushed ?? (await readRows(path, opts, { factors, select }, progress, wantDigest));
  if (progress) clearProgressLine();
  // The reader's buffers and its carried bytes are garbage now.
  collectAfterStage(read.nRows);
  for (const f of factors)
    if (!read.header.includes(f))
      throw new InputError(
        `${read.source}: --factor column '${f}' is not in the file. The columns are ${read.header.map((h) => `'${h}'`).join(", ")}.`,
      );
  const days = calendar ? daysOf(read, calendar.column) : null;
  // The trend counts from the first date among the rows used: the designs are built again when a row
  // with an earlier date is left out (a missing value elsewhere).
  let firstDay = days ? dayRange(days.days, null)[0] : 0;
  let table = calendar ? withCalendarColumns(read, calendar, days!.days, firstDay, days!.daily) : read;
  const order = { ...orderGiven };
  if (calendar?.dayOfWeek && !order.day_of_week) {
    const c = table.columns.get("day_of_week");
    if (c?.kind === "factor") order.day_of_week = c.levels;
  }
  const build = () =>
    specs.map((spec) => {
      // Each model takes the references of its own factors; one that names no model's term goes to the first
      // model, whose design then refuses it as a single model would.
      const ownRefs = Object.fromEntries(
        Object.entries(refs).filter(
          ([k]) =>
            termVariables(spec).includes(k) ||
            (spec === specs[0] && !specs.some((other) => termVariables(other).includes(k))),
        ),
      );
      return buildDesign(table, spec, {
        exposure: pushed ? pushed.exposureColumn || undefined : opts.exposure,
        offset: pushed ? undefined : opts.offset,
        weights: pushed ? pushed.weightsColumn : opts.weights,
        refs: ownRefs,
        order,
        complete: specs.length > 1 ? vars : undefined,
      });
    });
  let designs = build();
  collectAfterStage(read.nRows);
  if (pushed)
    designs = designs.map((d) =>
      collapsedDesign(
        d,
        read,
        pushed.census,
        pushed.by,
        { exposure: opts.exposure, offset: opts.offset, weights: opts.weights },
        pushed.sums,
      ),
    );
  if (calendar && days) {
    const [used] = dayRange(days.days, designs[0].rowIndex);
    if (used !== firstDay) {
      firstDay = used;
      table = withCalendarColumns(read, calendar, days.days, firstDay, days.daily);
      designs = build();
    }
    const cal: Calendar = { ...calendar, firstDay, lastDay: dayRange(days.days, designs[0].rowIndex)[1] };
    designs = designs.map((d) => ({ ...d, calendar: cal }));
  }
  for (const n of designs[0].notices) notice(opts, n);
  for (const { column, option } of alsoRead)
    if (!table.columns.has(column))
      throw new InputError(
        `${name}: ${option} column '${column}' is not in the file. The columns are ${table.header.map((h) => `'${h}'`).join(", ")}.`,
      );
  const labels = new Map(alsoRead.map(({ column }) => [column, columnLabels(table, column, designs[0].rowIndex)]));
  return { designs, control, labels, sha256, sums: pushed?.sums };
}

/** The calendar options, or null without --date (an input error when --trend, --season or --day-of-week come without it). */
function calendarOptionsOf(opts: ModelOptions): CalendarOptions | null {
  if (!opts.date) {
    const orphan = opts.trend
      ? "--trend"
      : opts.season !== undefined
        ? "--season"
        : opts.dayOfWeek
          ? "--day-of-week"
          : null;
    if (orphan) throw new InputError(`${orphan} makes its terms from the dates: give the date column with --date COL.`);
    return null;
  }
  const season = opts.season === undefined ? 0 : parsePositiveInt("--season", opts.season);
  if (season > MAX_HARMONICS)
    throw new InputError(`--season takes 1 to ${MAX_HARMONICS} harmonic pairs (got ${season}).`);
  return { column: opts.date, trend: !!opts.trend, season, dayOfWeek: !!opts.dayOfWeek };
}

/**
 * The rows, from wherever they are: a CSV (gzip-compressed or not), a Parquet
 * file (by its .parquet name), or a query against a database (--db, --sql).
 */
export async function readRows(
  path: string,
  opts: Pick<ModelOptions, "db" | "sql" | "delimiter" | "decimalComma" | "na">,
  columns: { factors: string[]; select?: string[] },
  progress?: (bytes: number, rows: number) => void,
  /** Whether the input's SHA-256 is wanted (only a model file records it). */
  digest = true,
): Promise<{ table: Table; sha256: string }> {
  if (!!opts.db !== !!opts.sql)
    throw new InputError(
      opts.db ? "--db needs --sql QUERY: the query whose rows are the data." : "--sql needs --db URL.",
    );
  if (opts.db) {
    if (opts.db.startsWith("duckdb:")) return loadDuckDbQuery(opts.db, opts.sql!, columns);
    if (/^postgres(ql)?:\/\//.test(opts.db)) return loadPostgresQuery(opts.db, opts.sql!, columns);
    if (opts.db.startsWith("clickhouse://")) return loadClickHouseQuery(opts.db, opts.sql!, columns);
    throw unknownDatabase(opts.db);
  }
  if (/\.parquet$/i.test(path)) return loadParquet(path, columns);
  return loadTableStream(
    path,
    { delimiter: opts.delimiter, decimalComma: opts.decimalComma, na: parseNa(opts.na), digest, ...columns },
    progress,
  );
}
