// Command-line options: the shared option sets each command adds, and the
// parsers that turn their text into values, with one message per mistake.
import { type Command, Option } from "commander";
import { InputError } from "../errors.js";
import { DEFAULT_NA } from "../io/dialect.js";

/** Options every command reads its input and writes its output with. */
export interface IoOptions {
  format: string;
  output?: string;
  delimiter?: string;
  decimalComma?: boolean;
  na?: string;
  quiet?: boolean;
  color: boolean;
  debug?: boolean;
}

/** Options of the commands that fit models (fit, check, compare). */
export interface ModelOptions extends IoOptions {
  model: string[];
  exposure?: string;
  offset?: string;
  factor: string[];
  ref: string[];
  order: string[];
  weights?: string;
  intercept: boolean;
  level?: string;
  intervals?: string;
  robust?: boolean;
  plot?: string;
  maxIter: string;
  tolerance: string;
  mergePatterns: string;
  date?: string;
  trend?: boolean;
  season?: string;
  dayOfWeek?: boolean;
  db?: string;
  sql?: string;
}

export function collect(value: string, previous: string[]): string[] {
  return [...previous, value];
}

/** A probability strictly between 0 and 1 (interval and test levels). */
export function parseProbability(option: string, value: string, example: string): number {
  const x = Number(value);
  if (!(x > 0 && x < 1))
    throw new InputError(`${option} must be a number between 0 and 1, such as ${example} (got '${value}').`);
  return x;
}

export function parsePositiveInt(option: string, value: string): number {
  const x = Number(value);
  if (!Number.isInteger(x) || x < 1)
    throw new InputError(`${option} must be a whole number of at least 1 (got '${value}').`);
  return x;
}

export function parseNonNegativeInt(option: string, value: string): number {
  const x = Number(value);
  if (!Number.isInteger(x) || x < 0) throw new InputError(`${option} must be a whole number ≥ 0 (got '${value}').`);
  return x;
}

export function parsePositive(option: string, value: string): number {
  const x = Number(value);
  if (!(x > 0) || !Number.isFinite(x)) throw new InputError(`${option} must be a positive number (got '${value}').`);
  return x;
}

export function oneOf<T extends string>(option: string, value: string, allowed: readonly T[]): T {
  if (!allowed.includes(value as T))
    throw new InputError(`${option} must be one of ${allowed.join(", ")} (got '${value}').`);
  return value as T;
}

export function parseRefs(list: string[]): Record<string, string> {
  // No prototype: a column may be called "constructor" or "__proto__".
  const refs: Record<string, string> = Object.create(null);
  for (const r of list) {
    const k = r.indexOf("=");
    if (k <= 0 || k === r.length - 1)
      throw new InputError(`--ref takes COLUMN=LEVEL, such as --ref clinic=central (got '${r}').`);
    refs[r.slice(0, k)] = r.slice(k + 1);
  }
  return refs;
}

/** COL=NUMBER options (repeatable: --baseline-at, --ratio-per) → a number per column; `positive` refuses ≤ 0. */
export function parseColumnNumbers(
  option: string,
  list: string[],
  example: string,
  positive: boolean,
): Record<string, number> {
  const out: Record<string, number> = Object.create(null);
  for (const r of list) {
    const k = r.lastIndexOf("=");
    const x = Number(r.slice(k + 1));
    if (k <= 0 || k === r.length - 1 || !Number.isFinite(x) || (positive && !(x > 0)))
      throw new InputError(
        `${option} takes COLUMN=${positive ? "a number above 0" : "NUMBER"}, such as ${option} ${example} (got '${r}').`,
      );
    out[r.slice(0, k)] = x;
  }
  return out;
}

/** --order COL=L1,L2,… (repeatable) → the listed order of each factor's levels. */
export function parseOrder(list: string[]): Record<string, string[]> {
  const order: Record<string, string[]> = Object.create(null);
  for (const o of list) {
    const k = o.indexOf("=");
    const levels = o
      .slice(k + 1)
      .split(",")
      .map((s) => s.trim())
      .filter(Boolean);
    if (k <= 0 || levels.length === 0)
      throw new InputError(`--order takes COLUMN=LEVEL,LEVEL,…, such as --order weekday=mon,tue,wed (got '${o}').`);
    if (new Set(levels).size !== levels.length)
      throw new InputError(`--order ${o.slice(0, k)}=…: a level is named twice (got '${o}').`);
    order[o.slice(0, k)] = levels;
  }
  return order;
}

export function parseNa(value: string | undefined): string[] {
  if (value === undefined) return DEFAULT_NA;
  return value.split(",").map((s) => s.trim());
}

/** Column names given comma-separated and repeatable (--factor a,b --factor c). */
export function parseColumnList(list: string[]): string[] {
  return list.flatMap((f) =>
    f
      .split(",")
      .map((s) => s.trim())
      .filter(Boolean),
  );
}

export function plotKind(path: string): "svg" | "png" {
  if (/\.svg$/i.test(path)) return "svg";
  if (/\.png$/i.test(path)) return "png";
  throw new InputError(`--plot takes a file name ending in .svg or .png (got '${path}').`);
}

/** --cluster COL (repeatable) with the help text of the command that uses it. */
export function addClusterOption(cmd: Command, help: string): Command {
  return cmd.option("--cluster <col>", help, collect, []);
}

/** The model, family and design options of fit, check and compare, and where the rows come from. */
export function addModelOptions(cmd: Command, multiModel = false): Command {
  return addSourceOptions(addModelSpecOptions(cmd, multiModel));
}

/** --db and --sql: rows from a database instead of a file. */
export function addSourceOptions(cmd: Command): Command {
  return cmd
    .option(
      "--db <url>",
      "read the rows from a database instead of a file: duckdb: (in memory), duckdb:PATH, postgres://user@host:port/db or clickhouse://host:port/db",
    )
    .option("--sql <query>", "with --db: the query whose rows are the data (it becomes a subquery)");
}

/** The interval and covariance options of fit. */
export function addIntervalOptions(cmd: Command): Command {
  return cmd
    .option("--level <p>", "interval level", "0.95")
    .addOption(new Option("--intervals <kind>", "wald, profile or both (default: both; wald with --cluster)"))
    .option("--robust", "sandwich (Huber-White) standard errors")
    .option(
      "--cluster <col>",
      "cluster-robust standard errors for rows grouped by COL (repeat for two-way clustering, e.g. clinic and week)",
      collect,
      [],
    )
    .option(
      "--gee <structure>",
      "estimate by GEE within the --cluster groups, with a working correlation: independence, exchangeable (every pair alike) or ar1 (fading with distance in --order-by)",
    )
    .option("--order-by <col>", "the column that orders the rows within a cluster (day, week, date), for --gee ar1");
}

function addModelSpecOptions(cmd: Command, multiModel: boolean): Command {
  const withModel = cmd.option(
    "--model <spec>",
    multiModel ? 'a model "COUNT ~ TERMS" (give two or more)' : 'response column and terms, as "COUNT ~ a + b + a:b"',
    collect,
    [],
  );
  const withFamily = multiModel
    ? withModel.option(
        "--family <name>",
        "poisson, negbin, quasipoisson, zip, zinb, hurdle-poisson or hurdle-negbin: once for all models, or once per --model in order",
        collect,
        [],
      )
    : withModel.addOption(
        new Option(
          "--family <name>",
          "poisson, negbin, quasipoisson or auto; for fit also zip, zinb, hurdle-poisson or hurdle-negbin",
        ).default("poisson"),
      );
  return withFamily
    .option(
      "--exposure <col>",
      "how much opportunity each row had for events, in plain units (bed-days, open hours, person-years); rates are per unit of it (tallyfit takes the log)",
    )
    .option(
      "--offset <col>",
      "a column that is already a log quantity (log person-years computed upstream); added unchanged to the linear predictor",
    )
    .option(
      "--factor <cols>",
      "treat these numeric-looking columns as categorical (comma-separated, repeatable)",
      collect,
      [],
    )
    .option("--ref <col=level>", "reference level of a factor (repeatable)", collect, [])
    .option(
      "--order <col=levels>",
      "order of a factor's levels in tables and pictures, e.g. weekday=mon,tue,wed (repeatable); the first with events is the default reference",
      collect,
      [],
    )
    .option("--weights <col>", "frequency weights (a row stands for that many identical rows)")
    .option("--no-intercept", "drop the intercept")
    .option(
      "--date <col>",
      "the date of each row: YYYY-MM-DD, YYYY-Www (ISO week, its Monday) or YYYY-MM (its first day)",
    )
    .option("--trend", "with --date: add the term trend, years since the first date used (its rate ratio is per year)")
    .option(
      "--season <k>",
      "with --date: add k pairs of annual harmonics, season_sin1, season_cos1, … (1 to 6; 1 is one peak a year)",
    )
    .option("--day-of-week", "with --date (daily): add the factor day_of_week, Monday first");
}

/** The diagnostic picture (fit and check). */
export function addPlotOption(cmd: Command): Command {
  return cmd.option("--plot <file>", "diagnostic picture: FILE.svg or FILE.png");
}

/** Output options (format, file) shared by every command. */
export function addOutputOptions(cmd: Command, formats: string, dflt: string, writes = "the report"): Command {
  return cmd
    .addOption(new Option("--format <fmt>", formats).default(dflt))
    .option("--output <file>", `write ${writes} to FILE (atomically) instead of stdout`);
}

/** The plot and IRLS options of the commands that fit models. */
export function addFitControlOptions(cmd: Command): Command {
  return cmd
    .option("--delimiter <c>", "field delimiter: one character, or tab (default ',', and tab for .tsv)")
    .option("--decimal-comma", "numbers are written with a decimal comma (1,5); needs another --delimiter, such as ';'")
    .option("--na <tokens>", "comma-separated missing-value tokens (default: empty, NA, NaN, null, .)")
    .option("--max-iter <n>", "IRLS iteration limit", "50")
    .option("--tolerance <x>", "IRLS convergence tolerance on the relative change in deviance", "1e-10")
    .addOption(
      new Option(
        "--merge-patterns <when>",
        "run IRLS over rows merged by covariate pattern: auto (10,000+ rows, at most half as many patterns), always or never",
      ).default("auto"),
    );
}

/** Reading options of a command that takes new rows without fitting (predict). */
export function addReadOptions(cmd: Command): Command {
  return cmd
    .option("--delimiter <c>", "field delimiter: one character, or tab (default ',', and tab for .tsv)")
    .option("--decimal-comma", "numbers are written with a decimal comma (1,5); needs another --delimiter, such as ';'")
    .option("--na <tokens>", "comma-separated missing-value tokens");
}

/** Terminal options shared by every command. */
export function addTerminalOptions(cmd: Command): Command {
  return cmd
    .option("--quiet", "no notices on stderr")
    .option("--no-color", "no colour")
    .option("--debug", "show a stack trace on internal errors");
}
