// Command-line wiring: options → stage functions → output. No statistics here.
import { Command, CommanderError, Option } from "commander";
import { readFileSync } from "node:fs";
import type { Table } from "../io/table.js";
import { loadModelFile } from "../io/model-file.js";
import { buildPredictionDesign } from "../design/predict-design.js";
import { predictRows } from "../infer/predict.js";
import { summarizeGroups, type GroupSummary } from "../infer/groups.js";
import { naturalCompare } from "../design/naming.js";
import { modelFileOf } from "../report/model-file.js";
import { renderPredictCsv, renderPredictText } from "../report/predict.js";
import { EXIT, FitError, InputError } from "../errors.js";
import { loadTableStream, parseRecords, parseTable } from "../io/csv.js";
import { DEFAULT_NA } from "../io/dialect.js";
import { readSource } from "../io/source-bytes.js";
import { parseFormula, termVariables } from "../formula/formula.js";
import { buildDesign } from "../design/design.js";
import type { Design } from "../design/design.js";
import type { FamilyChoice, FamilyName } from "../fit/count-fit.js";
import { compareModels } from "../infer/compare.js";
import { renderCompareText } from "../report/compare-text.js";
import { analyzeCheckWithFits, analyzeFitParallel, diagnosticsOf, fitFamily, type MergeChoice } from "../analysis.js";
import { summarizeFit, type FitSummary } from "../infer/summary.js";
import { renderSvg } from "../report/svg.js";
import { svgToPng } from "../report/png.js";
import { renderFitText } from "../report/fit-text.js";
import { renderCheckText } from "../report/check-text.js";
import { renderFitCsv, renderFitMarkdown, renderJson } from "../report/fit-tabular.js";
import { makeStyle, wantColor } from "../report/style.js";
import { writeAtomic, writeStdout } from "./output.js";

const VERSION: string = JSON.parse(readFileSync(new URL("../../../package.json", import.meta.url), "utf8")).version;

function collect(value: string, previous: string[]): string[] {
  return [...previous, value];
}

function parseLevel(v: string): number {
  const x = Number(v);
  if (!(x > 0 && x < 1)) throw new InputError(`--level must be a number between 0 and 1, such as 0.95 (got '${v}').`);
  return x;
}

function parsePositiveInt(name: string, v: string): number {
  const x = Number(v);
  if (!Number.isInteger(x) || x < 1) throw new InputError(`${name} must be a whole number of at least 1 (got '${v}').`);
  return x;
}

function parsePositive(name: string, v: string): number {
  const x = Number(v);
  if (!(x > 0) || !Number.isFinite(x)) throw new InputError(`${name} must be a positive number (got '${v}').`);
  return x;
}

function parseRefs(list: string[]): Record<string, string> {
  const refs: Record<string, string> = {};
  for (const r of list) {
    const k = r.indexOf("=");
    if (k <= 0 || k === r.length - 1)
      throw new InputError(`--ref takes COLUMN=LEVEL, such as --ref clinic=central (got '${r}').`);
    refs[r.slice(0, k)] = r.slice(k + 1);
  }
  return refs;
}

function parseNa(v: string | undefined): string[] {
  if (v === undefined) return DEFAULT_NA;
  return v.split(",").map((s) => s.trim());
}

interface CommonOptions {
  model: string[];
  exposure?: string;
  offset?: string;
  family: string;
  factor: string[];
  ref: string[];
  weights?: string;
  intercept: boolean;
  level: string;
  intervals: string;
  robust?: boolean;
  format: string;
  output?: string;
  plot?: string;
  delimiter?: string;
  na?: string;
  maxIter: string;
  tolerance: string;
  mergePatterns: string;
  quiet?: boolean;
  color: boolean;
  debug?: boolean;
}

function addCommonOptions(cmd: Command, multiModel = false): Command {
  const withModel = cmd.option(
    "--model <spec>",
    multiModel ? 'a model "COUNT ~ TERMS" (give two or more)' : 'response column and terms, as "COUNT ~ a + b + a:b"',
    collect,
    [],
  );
  const withFamily = multiModel
    ? withModel.option(
        "--family <name>",
        "poisson, negbin or quasipoisson: once for all models, or once per --model in order",
        collect,
        [],
      )
    : withModel.addOption(new Option("--family <name>", "poisson, negbin, quasipoisson or auto").default("poisson"));
  return withFamily
    .option("--exposure <col>", "exposure column (person-time, open hours, bed-days); its log becomes the offset")
    .option("--offset <col>", "an offset column already on the log scale")
    .option(
      "--factor <cols>",
      "treat these numeric-looking columns as categorical (comma-separated, repeatable)",
      collect,
      [],
    )
    .option("--ref <col=level>", "reference level of a factor (repeatable)", collect, [])
    .option("--weights <col>", "frequency weights (a row stands for that many identical rows)")
    .option("--no-intercept", "drop the intercept")
    .option("--level <p>", "interval level", "0.95")
    .addOption(new Option("--intervals <kind>", "wald, profile or both").default("both"))
    .option("--robust", "sandwich (Huber-White) standard errors")
    .addOption(new Option("--format <fmt>", "text, json, csv or markdown").default("text"))
    .option("--output <file>", "write the report to FILE (atomically) instead of stdout")
    .option("--plot <file>", "diagnostic picture: FILE.svg or FILE.png")
    .option("--delimiter <c>", "field delimiter (default ',' and tab for .tsv)")
    .option("--na <tokens>", "comma-separated missing-value tokens (default: empty, NA, NaN, null, .)")
    .option("--max-iter <n>", "IRLS iteration limit", "50")
    .option("--tolerance <x>", "IRLS convergence tolerance on the relative change in deviance", "1e-10")
    .addOption(
      new Option(
        "--merge-patterns <when>",
        "run IRLS over rows merged by covariate pattern: auto (10,000+ rows, at most half as many patterns), always or never",
      ).default("auto"),
    )
    .option("--quiet", "no notices on stderr")
    .option("--no-color", "no colour")
    .option("--debug", "show a stack trace on internal errors");
}

/** What output needs to know of the options, shared by every command. */
interface OutputOptions {
  output?: string;
  quiet?: boolean;
  color: boolean;
}

function notice(opts: { quiet?: boolean }, msg: string): void {
  if (!opts.quiet) process.stderr.write(`tallyfit: ${msg}\n`);
}

interface Loaded {
  design: Design;
  control: { maxIter: number; tolerance: number };
}

/**
 * Read the input and build the designs: the load → design stages, shared by
 * the fitting commands. The table itself is not returned (only the labels of
 * the alsoRead columns on the first design's rows), so its columns can be
 * freed before fitting.
 */
async function loadDesigns(
  file: string | undefined,
  opts: CommonOptions,
  modelTexts: string[],
  alsoRead: string[] = [],
): Promise<{ designs: Design[]; control: Loaded["control"]; labels: Map<string, string[]>; sha256: string }> {
  const control = {
    maxIter: parsePositiveInt("--max-iter", opts.maxIter),
    tolerance: parsePositive("--tolerance", opts.tolerance),
  };
  const specs = modelTexts.map((t) => parseFormula(t, { intercept: opts.intercept }));
  const refs = parseRefs(opts.ref);
  const factors = opts.factor.flatMap((f) =>
    f
      .split(",")
      .map((s) => s.trim())
      .filter(Boolean),
  );
  const path = file ?? "-";
  if (path === "-" && process.stdin.isTTY)
    throw new InputError("no input: give a CSV file, or pipe one in (a FILE of - reads standard input).");
  const vars = [...new Set(specs.flatMap((spec) => [spec.response, ...termVariables(spec)]))];
  const select = [
    ...vars,
    ...[opts.exposure, opts.offset, opts.weights].filter((x): x is string => !!x),
    ...Object.keys(refs),
    ...alsoRead,
  ];
  const name = path === "-" ? "<stdin>" : path;
  const progress = opts.quiet || !process.stderr.isTTY ? undefined : readingProgress();
  const { table, sha256 } = await loadTableStream(
    path,
    { delimiter: opts.delimiter, na: parseNa(opts.na), factors, select },
    progress,
  );
  if (progress) process.stderr.write("\r\x1b[K");
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
      complete: specs.length > 1 ? vars : undefined,
    });
  });
  for (const n of designs[0].notices) notice(opts, n);
  for (const c of alsoRead)
    if (!table.columns.has(c))
      throw new InputError(
        `${name}: --summary-by column '${c}' is not in the file. The columns are ${table.header.map((h) => `'${h}'`).join(", ")}.`,
      );
  const labels = new Map(alsoRead.map((c) => [c, groupLabels(table, c, designs[0].rowIndex)]));
  return { designs, control, labels, sha256 };
}

async function loadDesign(
  file: string | undefined,
  opts: CommonOptions,
  modelText: string,
  alsoRead: string[] = [],
): Promise<Loaded & { labels: Map<string, string[]>; sha256: string }> {
  const { designs, control, labels, sha256 } = await loadDesigns(file, opts, [modelText], alsoRead);
  return { design: designs[0], control, labels, sha256 };
}

/** Group labels of some data rows: factor levels, or numbers as written by String(). */
function groupLabels(table: Table, column: string, rows: ArrayLike<number>): string[] {
  const c = table.columns.get(column)!;
  const out: string[] = new Array(rows.length);
  for (let k = 0; k < rows.length; k++) {
    const i = rows[k];
    if (c.kind === "factor") out[k] = c.codes[i] < 0 ? "(missing)" : c.levels[c.codes[i]];
    else out[k] = Number.isNaN(c.values[i]) ? "(missing)" : String(c.values[i]);
  }
  return out;
}

/** Progress on stderr while reading a large input (only on a terminal, never with --quiet). */
function readingProgress(): (bytes: number, rows: number) => void {
  let last = 0;
  return (bytes, rows) => {
    if (bytes < 32e6 || Date.now() - last < 200) return;
    last = Date.now();
    process.stderr.write(`\rtallyfit: reading ${(bytes / 1e6).toFixed(0)} MB, ${rows.toLocaleString("en")} rows…`);
  };
}

function mergeChoice(opts: { mergePatterns: string }): MergeChoice {
  return oneOf("--merge-patterns", opts.mergePatterns, ["auto", "always", "never"]) as MergeChoice;
}

/** Progress of the fit on stderr: only for large data on a terminal, never with --quiet. */
function fittingProgress(opts: { quiet?: boolean }, rows: number): ((message: string) => void) | undefined {
  if (opts.quiet || !process.stderr.isTTY || rows < 100000) return undefined;
  return (message) => process.stderr.write(`\r\x1b[Ktallyfit: ${message}`);
}

function oneOf(name: string, value: string, allowed: string[]): string {
  if (!allowed.includes(value)) throw new InputError(`${name} must be one of ${allowed.join(", ")} (got '${value}').`);
  return value;
}

function textLayout(opts: OutputOptions) {
  const toTTY = !opts.output && process.stdout.isTTY;
  const color = !opts.output && wantColor(process.stdout.isTTY, process.env, opts.color);
  return { style: makeStyle(color), width: toTTY ? Math.max(60, Math.min(process.stdout.columns ?? 100, 120)) : 100 };
}

async function emit(opts: OutputOptions, content: string): Promise<void> {
  if (opts.output) {
    await writeAtomic(opts.output, content);
    notice(opts, `report written to ${opts.output}`);
  } else await writeStdout(content);
}

function plotKind(path: string): "svg" | "png" {
  if (/\.svg$/i.test(path)) return "svg";
  if (/\.png$/i.test(path)) return "png";
  throw new InputError(`--plot takes a file name ending in .svg or .png (got '${path}').`);
}

async function writePlot(
  opts: CommonOptions,
  path: string,
  title: string,
  d: ReturnType<typeof diagnosticsOf>,
  summary: FitSummary,
): Promise<void> {
  const svg = renderSvg({ title, rootogram: d.rootogram, fitted: d.fitted, residuals: d.residuals, summary });
  await writeAtomic(path, plotKind(path) === "svg" ? svg : svgToPng(svg));
  notice(opts, `picture written to ${path}`);
}

function parseTestLevel(v: string): number {
  const x = Number(v);
  if (!(x > 0 && x < 1))
    throw new InputError(`--alpha is the test level, a number between 0 and 1 such as 0.05 (got '${v}').`);
  return x;
}

type FitCliOptions = CommonOptions & { alpha: string; saveModel?: string; summaryBy?: string; per: string };

async function runFit(file: string | undefined, opts: FitCliOptions): Promise<number> {
  if (opts.model.length !== 1)
    throw new InputError(
      opts.model.length === 0
        ? 'fit needs --model "COUNT ~ TERMS".'
        : "fit takes one --model; use `tallyfit compare` for several.",
    );
  const level = parseLevel(opts.level);
  oneOf("--format", opts.format, ["text", "json", "csv", "markdown"]);
  const family = oneOf("--family", opts.family, ["poisson", "quasipoisson", "negbin", "auto"]) as FamilyChoice;
  const intervals = oneOf("--intervals", opts.intervals, ["wald", "profile", "both"]) as "wald" | "profile" | "both";
  const testLevel = parseTestLevel(opts.alpha);
  const per = parsePositive("--per", opts.per);
  const merge = mergeChoice(opts);
  const { design, control, labels, sha256 } = await loadDesign(
    file,
    opts,
    opts.model[0],
    opts.summaryBy ? [opts.summaryBy] : [],
  );
  if (opts.plot) plotKind(opts.plot);
  const onProgress = fittingProgress(opts, design.n);
  const { summary, countFit } = await analyzeFitParallel(design, {
    family,
    control,
    level,
    intervals,
    robust: !!opts.robust,
    testLevel,
    merge,
    onProgress,
  });
  if (onProgress) process.stderr.write("\r\x1b[K");
  const wide = opts.format === "text" && !opts.output && process.stdout.isTTY && (process.stdout.columns ?? 0) >= 60;
  const diag = opts.plot || wide ? diagnosticsOf(design, countFit) : null;
  if (opts.plot && diag) await writePlot(opts, opts.plot, `${summary.family} fit of ${summary.model}`, diag, summary);
  if (opts.summaryBy)
    summary.summary_by = summarizeGroups(
      opts.summaryBy,
      labels.get(opts.summaryBy)!,
      design.y,
      countFit.fit.mu,
      design.exposure,
      per,
      level,
      naturalCompare,
    );
  if (opts.saveModel) {
    await writeAtomic(opts.saveModel, renderJson(modelFileOf(design, countFit, { version: VERSION, sha256 })));
    notice(opts, `model saved to ${opts.saveModel}`);
  }
  let content: string;
  if (opts.format === "json") content = renderJson(summary);
  else if (opts.format === "csv") content = renderFitCsv(summary);
  else if (opts.format === "markdown") content = renderFitMarkdown(summary);
  else
    content = renderFitText(summary, {
      ...textLayout(opts),
      intervals,
      rootogram: wide && diag ? diag.rootogram : undefined,
    });
  await emit(opts, content);
  return EXIT.ok;
}

async function runCheck(file: string | undefined, opts: CommonOptions & { alpha: string }): Promise<number> {
  if (opts.model.length !== 1) throw new InputError('check needs one --model "COUNT ~ TERMS".');
  oneOf("--format", opts.format, ["text", "json"]);
  if (opts.family !== "poisson") throw new InputError("check always tests the Poisson model; leave out --family.");
  const testLevel = parseTestLevel(opts.alpha);
  const merge = mergeChoice(opts);
  const { design, control } = await loadDesign(file, opts, opts.model[0]);
  if (opts.plot) plotKind(opts.plot);
  const onProgress = fittingProgress(opts, design.n);
  const { check, poisson } = analyzeCheckWithFits(design, { control, testLevel, merge, onProgress });
  if (onProgress) process.stderr.write("\r\x1b[K");
  if (opts.plot) {
    const summary = summarizeFit(design, poisson, { level: parseLevel(opts.level) });
    await writePlot(
      opts,
      opts.plot,
      `Poisson fit of ${summary.model} (check)`,
      diagnosticsOf(design, poisson),
      summary,
    );
  }
  const content =
    opts.format === "json" ? renderJson({ schema: check.schema, check }) : renderCheckText(check, textLayout(opts));
  await emit(opts, content);
  return check.flagged ? EXIT.flagged : EXIT.ok;
}

interface PredictCliOptions {
  modelFile: string;
  level: string;
  flagLevel: string;
  draws: string;
  seed: string;
  failOnFlag?: boolean;
  summaryBy?: string;
  per: string;
  format: string;
  output?: string;
  delimiter?: string;
  na?: string;
  quiet?: boolean;
  color: boolean;
}

async function runPredict(file: string | undefined, opts: PredictCliOptions): Promise<number> {
  oneOf("--format", opts.format, ["csv", "json", "text"]);
  const level = parseLevel(opts.level);
  const flagLevel = Number(opts.flagLevel);
  if (!(flagLevel > 0 && flagLevel < 1))
    throw new InputError(`--flag-level must be between 0 and 1, such as 0.99 (got '${opts.flagLevel}').`);
  const draws = parsePositiveInt("--draws", opts.draws);
  const seed = Number(opts.seed);
  if (!Number.isInteger(seed) || seed < 0)
    throw new InputError(`--seed must be a whole number ≥ 0 (got '${opts.seed}').`);
  const per = parsePositive("--per", opts.per);
  const saved = await loadModelFile(opts.modelFile);
  const path = file ?? "-";
  if (path === "-" && process.stdin.isTTY)
    throw new InputError("no input: give a CSV file of new rows, or pipe one in.");
  const { bytes, name } = await readSource(path);
  const factors = saved.factors.map((f) => f.name);
  const table = parseTable(bytes, { source: name, delimiter: opts.delimiter, na: parseNa(opts.na), factors });
  if (opts.summaryBy && !table.columns.has(opts.summaryBy))
    throw new InputError(`${name}: --summary-by column '${opts.summaryBy}' is not in the file.`);
  const pd = buildPredictionDesign(table, saved);
  const result = predictRows(pd, saved, { level, flagLevel, draws, seed });
  let groups: GroupSummary | undefined;
  if (opts.summaryBy) {
    const idx = Int32Array.from({ length: pd.n }, (_, i) => i);
    groups = summarizeGroups(
      opts.summaryBy,
      groupLabels(table, opts.summaryBy, idx),
      pd.observed,
      result.rows.map((r) => r.expected),
      pd.exposure,
      per,
      level,
      naturalCompare,
    );
  }
  let content: string;
  if (opts.format === "json") content = renderJson(groups ? { ...result, summary_by: groups } : result);
  else if (opts.format === "csv")
    content = renderPredictCsv(parseRecords(bytes, { source: name, delimiter: table.delimiter }), result);
  else {
    const idx = Int32Array.from({ length: pd.n }, (_, i) => i);
    const cols = saved.factors.map((f) => groupLabels(table, f.name, idx));
    const labels = Array.from({ length: pd.n }, (_, i) => cols.map((c) => c[i]).join(" "));
    content = renderPredictText(result, groups, {
      ...textLayout(opts),
      labels,
      labelHeading: saved.factors.map((f) => f.name).join(" "),
    });
  }
  await emit(opts, content);
  if (result.n_flagged > 0)
    notice(opts, `${result.n_flagged} row${result.n_flagged === 1 ? "" : "s"} flagged above the ${flagLevel} limit`);
  return opts.failOnFlag && result.n_flagged > 0 ? EXIT.flagged : EXIT.ok;
}

async function runCompare(
  file: string | undefined,
  opts: Omit<CommonOptions, "family"> & { family: string[] },
): Promise<number> {
  if (opts.model.length < 2) throw new InputError("compare needs two or more --model options.");
  oneOf("--format", opts.format, ["text", "json"]);
  const fams = opts.family.length === 0 ? ["poisson"] : opts.family;
  if (fams.length !== 1 && fams.length !== opts.model.length)
    throw new InputError(
      `give --family once (for all models) or once per --model (${opts.model.length} times); got it ${fams.length} times.`,
    );
  for (const f of fams) oneOf("--family", f, ["poisson", "negbin", "quasipoisson"]);
  const merge = mergeChoice(opts);
  const { designs, control } = await loadDesigns(file, { ...opts, family: "poisson" }, opts.model);
  const entries = designs.map((design, i) => ({
    design,
    mf: fitFamily(design, (fams.length === 1 ? fams[0] : fams[i]) as FamilyName, control, merge),
  }));
  const result = compareModels(entries);
  const content = opts.format === "json" ? renderJson(result) : renderCompareText(result, textLayout(opts));
  await emit(opts, content);
  return EXIT.ok;
}

export function buildProgram(onResult: (code: number) => void): Command {
  const program = new Command();
  program
    .name("tallyfit")
    .description("Poisson and negative-binomial rate models for count data in CSV files.")
    .version(VERSION)
    .exitOverride()
    .configureOutput({ writeErr: (s) => process.stderr.write(s), writeOut: (s) => process.stdout.write(s) })
    .showHelpAfterError("(run tallyfit --help for the commands and options)");
  addCommonOptions(
    program
      .command("fit")
      .description("fit one model and print the report")
      .argument("[file]", "CSV file, or - for standard input"),
  )
    .option("--alpha <p>", "test level of the dispersion check used by --family auto", "0.05")
    .option("--save-model <file>", "write everything predict needs to FILE (JSON, schema tallyfit.model/1)")
    .option("--summary-by <col>", "observed and expected totals by group, with exact O/E limits")
    .option("--per <n>", "units of exposure for the crude rates of --summary-by", "1")
    .action(async (file: string | undefined, opts: FitCliOptions) => onResult(await runFit(file, opts)));
  program
    .command("predict")
    .description("expected counts, limits and excess-count flags for new rows under a saved model")
    .argument("[file]", "CSV file of new rows, or - for standard input")
    .requiredOption("--model-file <file>", "a model saved by tallyfit fit --save-model")
    .option("--level <p>", "level of the mean and prediction intervals", "0.95")
    .option("--flag-level <p>", "flag a row whose count is above this quantile of its predictive distribution", "0.99")
    .option("--draws <n>", "draws of the estimates for the prediction interval", "2000")
    .option("--seed <n>", "seed of those draws", "1")
    .option("--fail-on-flag", "exit code 4 when any row is flagged")
    .option("--summary-by <col>", "observed and expected totals by group, with exact O/E limits")
    .option("--per <n>", "units of exposure for the crude rates of --summary-by", "1")
    .addOption(new Option("--format <fmt>", "csv, json or text").default("csv"))
    .option("--output <file>", "write to FILE (atomically) instead of stdout")
    .option("--delimiter <c>", "field delimiter (default ',' and tab for .tsv)")
    .option("--na <tokens>", "comma-separated missing-value tokens")
    .option("--quiet", "no notices on stderr")
    .option("--no-color", "no colour")
    .option("--debug", "show a stack trace on internal errors")
    .action(async (file: string | undefined, opts: PredictCliOptions) => onResult(await runPredict(file, opts)));
  addCommonOptions(
    program
      .command("check")
      .description("dispersion and zero-count diagnostics of the Poisson model; exit code 4 when a test flags")
      .argument("[file]", "CSV file, or - for standard input"),
  )
    .option("--alpha <p>", "test level: a test flags when its p-value is below this", "0.05")
    .action(async (file: string | undefined, opts: CommonOptions & { alpha: string }) =>
      onResult(await runCheck(file, opts)),
    );
  addCommonOptions(
    program
      .command("compare")
      .description("nested-model tests and information criteria for two or more models on the same rows")
      .argument("[file]", "CSV file, or - for standard input"),
    true,
  ).action(async (file: string | undefined, opts: Omit<CommonOptions, "family"> & { family: string[] }) =>
    onResult(await runCompare(file, opts)),
  );
  return program;
}

const ESC = String.fromCharCode(27);

function stripAnsi(s: string): string {
  return s.replace(new RegExp(`${ESC}\\[[0-9;]*m`, "g"), "");
}

export async function main(argv: string[]): Promise<void> {
  process.stdout.on("error", (e: NodeJS.ErrnoException) => {
    if (e.code === "EPIPE") process.exit(EXIT.ok);
  });
  const debug = argv.includes("--debug");
  let code: number = EXIT.ok;
  try {
    const program = buildProgram((c) => (code = c));
    if (argv.length <= 2) {
      program.outputHelp();
      process.exitCode = EXIT.input;
      return;
    }
    // A deliberate fault, so the tests can check how internal errors are reported.
    if (process.env.TALLYFIT_TEST_CRASH === "1") throw new TypeError("deliberate test fault");
    await program.parseAsync(argv);
  } catch (e) {
    if (e instanceof CommanderError) {
      code =
        e.code === "commander.helpDisplayed" || e.code === "commander.version" || e.code === "commander.help"
          ? EXIT.ok
          : EXIT.input;
    } else if (e instanceof InputError || e instanceof FitError) {
      const kind = e instanceof FitError ? "the model could not be fitted" : "error";
      process.stderr.write(`tallyfit: ${kind}: ${stripAnsi(e.message)}\n`);
      code = e.exitCode;
    } else {
      const err = e as Error;
      process.stderr.write(
        `tallyfit: internal error: ${err?.message ?? String(e)}\nThis is a bug in tallyfit; please report it with the command you ran.${debug ? "" : " (--debug shows the stack trace)"}\n`,
      );
      if (debug && err?.stack) process.stderr.write(`${err.stack}\n`);
      code = EXIT.internal;
    }
  }
  process.exitCode = code;
}
