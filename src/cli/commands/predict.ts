// tallyfit predict: expected counts, limits and flags for new rows under a model file.
import { analyzePredict } from "../../analysis/predict.js";
import { statSync } from "node:fs";
import { EXIT, InputError } from "../../errors.js";
import { parseTable } from "../../io/csv.js";
import { loadModelFile } from "../../io/model-file.js";
import { readSource } from "../../io/source-bytes.js";
import { ADJUSTMENTS } from "../../infer/multiplicity.js";
import { columnLabels, type Table } from "../../io/table.js";
import { readRows } from "../input.js";
import { renderJson } from "../../report/json.js";
import { renderPredictCsv, renderPredictText } from "../../report/predict.js";
import { predictPage } from "../../report/pages.js";
import {
  type IoOptions,
  oneOf,
  parseNa,
  parseNonNegativeInt,
  parsePositive,
  parsePositiveInt,
  parseProbability,
} from "../options.js";
import { finish, textLayout } from "../output.js";
import { displaySafe } from "../../report/safe-text.js";
import { RunOutputs } from "../run-outputs.js";
import { notice } from "../terminal.js";

/** The most draws of the estimates behind a prediction interval (time and memory grow with them). */
export const PREDICT_MAX_DRAWS = 100_000;

export interface PredictCliOptions extends IoOptions {
  db?: string;
  sql?: string;
  modelFile: string;
  level: string;
  flagLevel: string;
  draws: string;
  seed: string;
  failOnFlag?: boolean | string;
  flagBy: string[];
  adjust: string;
  skipBadRows?: boolean;
  id: string[];
  maxModelAge?: string;
  summaryBy?: string;
  per: string;
}

export async function runPredict(file: string | undefined, opts: PredictCliOptions): Promise<number> {
  oneOf("--format", opts.format, ["csv", "json", "text", "markdown", "html"]);
  if (opts.summaryBy && opts.format === "csv")
    throw new InputError(
      "--summary-by is not part of the CSV output (one line per input row); use --format text or json for the group table.",
    );
  const level = parseProbability("--level", opts.level, "0.95");
  const flagLevel = parseProbability("--flag-level", opts.flagLevel, "0.99");
  const draws = parsePositiveInt("--draws", opts.draws);
  if (draws > PREDICT_MAX_DRAWS)
    throw new InputError(
      `--draws must be at most ${PREDICT_MAX_DRAWS.toLocaleString("en")} (got '${opts.draws}'); the default 2,000 is plenty for limits at the 0.99 level.`,
    );
  const seed = parseNonNegativeInt("--seed", opts.seed);
  const adjustHow = oneOf("--adjust", opts.adjust, ADJUSTMENTS);
  const maxAge = opts.maxModelAge === undefined ? null : parsePositive("--max-model-age", opts.maxModelAge);
  const failOn =
    opts.failOnFlag === undefined
      ? null
      : opts.failOnFlag === true
        ? "any"
        : oneOf("--fail-on-flag", opts.failOnFlag as string, ["rows", "groups", "any"]);
  if (failOn === "groups" && opts.flagBy.length === 0)
    throw new InputError("--fail-on-flag groups needs the groups: add --flag-by COL (a clinic, or a clinic's week).");
  const per = parsePositive("--per", opts.per);
  const outputs = new RunOutputs([file ?? "-", opts.modelFile]);
  if (opts.output) outputs.claim(opts.output, "--output");
  const saved = await loadModelFile(opts.modelFile);
  const path = file ?? "-";
  if (path === "-" && process.stdin.isTTY && !opts.db)
    throw new InputError("no input: give a CSV file of new rows, or pipe one in.");
  if (opts.db && file) throw new InputError(`give the new rows once: a FILE (${file}) or --db with --sql, not both.`);
  // The zero part of an excess-zero family may use factors of its own.
  const factors = [...saved.factors, ...(saved.zero_part?.factors ?? [])].map((f) => f.name);
  const table =
    opts.db || /\.parquet$/i.test(path) ? await engineRows(path, opts, factors) : await csvRows(path, opts, factors);
  const name = table.source;
  if (opts.summaryBy && saved.zero_part)
    throw new InputError(
      `--summary-by does not go with the ${saved.family} model yet: its observed/expected limits assume a Poisson or NB2 count. Use --flag-by ${opts.summaryBy}, which gives each group's total with an interval from the ${saved.family} distribution.`,
    );
  if (opts.summaryBy && !table.columns.has(opts.summaryBy))
    throw new InputError(`${name}: --summary-by column '${opts.summaryBy}' is not in the file.`);
  for (const c of opts.id)
    if (!table.columns.has(c))
      throw new InputError(
        `${name}: --id column '${c}' is not in the file. The columns are ${table.header.map((h) => `'${h}'`).join(", ")}.`,
      );
  for (const c of opts.flagBy)
    if (!table.columns.has(c))
      throw new InputError(
        `${name}: --flag-by column '${c}' is not in the file. The columns are ${table.header.map((h) => `'${h}'`).join(", ")}.`,
      );
  const {
    design,
    result,
    groups,
    table: rows,
  } = await analyzePredict(table, saved, {
    level,
    flagLevel,
    draws,
    seed,
    summaryBy: opts.summaryBy,
    per,
    flagBy: opts.flagBy,
    adjust: adjustHow,
    skipBad: !!opts.skipBadRows,
    ids: opts.id,
  });
  if (maxAge !== null) {
    const days = (Date.now() - statSync(opts.modelFile).mtimeMs) / 86_400_000;
    if (days > maxAge)
      result.warnings.push(
        `the model file ${opts.modelFile} was written ${Math.floor(days)} days ago, more than --max-model-age ${maxAge}: refit it on recent data`,
      );
  }
  let content: string;
  if (opts.format === "json") content = renderJson(groups ? { ...result, summary_by: groups } : result);
  else if (opts.format === "csv") content = renderPredictCsv([table.header, ...(table.records ?? [])], result);
  else {
    const all = Int32Array.from({ length: design.n }, (_, i) => i);
    const shown = [...opts.id, ...saved.factors.map((f) => f.name).filter((f) => !opts.id.includes(f))];
    const cols = shown.map((c) => columnLabels(rows, c, all));
    const labels = Array.from({ length: design.n }, (_, i) => cols.map((c) => c[i]).join(" "));
    if (opts.format === "markdown" || opts.format === "html")
      content = predictPage(result, groups, opts.format, { labels, labelHeading: shown.join(" ") });
    else
      content = renderPredictText(displaySafe(result), displaySafe(groups), {
        ...textLayout(opts),
        labels: displaySafe(labels),
        labelHeading: displaySafe(shown.join(" ")),
      });
  }
  await finish(outputs, opts, content);
  if (opts.format === "csv" || opts.output) for (const w of result.warnings) notice(opts, w);
  if (result.n_flagged > 0)
    notice(opts, `${result.n_flagged} row${result.n_flagged === 1 ? "" : "s"} flagged above the ${flagLevel} limit`);
  const groupsFlagged = result.n_groups_flagged ?? 0;
  if (groupsFlagged > 0)
    notice(
      opts,
      `${groupsFlagged} group${groupsFlagged === 1 ? "" : "s"} of ${result.flag_by!.join(" · ")} flagged: ${result
        .groups!.filter((g) => g.flagged)
        .map((g) => g.group)
        .join(", ")}`,
    );
  const tripped =
    failOn === "rows"
      ? result.n_flagged > 0
      : failOn === "groups"
        ? groupsFlagged > 0
        : failOn === "any"
          ? result.n_flagged > 0 || groupsFlagged > 0
          : false;
  return tripped ? EXIT.flagged : EXIT.ok;
}

/** New rows from a CSV (gzip or not): one reader feeds the predictions and the input fields the CSV output repeats. */
async function csvRows(path: string, opts: PredictCliOptions, factors: string[]): Promise<Table> {
  const { bytes, name } = await readSource(path);
  return parseTable(bytes, {
    source: name,
    delimiter: opts.delimiter,
    decimalComma: opts.decimalComma,
    na: parseNa(opts.na),
    factors,
    keepRecords: opts.format === "csv",
  });
}

/** New rows from a Parquet file or a query (every column), their fields as text for the CSV output. */
async function engineRows(path: string, opts: PredictCliOptions, factors: string[]): Promise<Table> {
  const { table } = await readRows(path, opts, { factors });
  if (opts.format === "csv") {
    const labels = table.header.map((h) =>
      table.columns.has(h)
        ? columnLabels(
            table,
            h,
            Int32Array.from({ length: table.nRows }, (_, i) => i),
          )
        : [],
    );
    table.records = Array.from({ length: table.nRows }, (_, i) =>
      labels.map((l) => (l[i] === undefined || l[i] === "(missing)" ? "" : l[i])),
    );
  }
  return table;
}
