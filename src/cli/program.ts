// The command surface: each command's arguments and options, wired to its run function.
import { Command } from "commander";
import { type CheckCliOptions, runCheck } from "./commands/check.js";
import { type CompareCliOptions, runCompare } from "./commands/compare.js";
import { type FitCliOptions, runFit, VERSION } from "./commands/fit.js";
import { type PredictCliOptions, runPredict } from "./commands/predict.js";
import { runJob } from "./commands/run.js";
import {
  collect,
  addClusterOption,
  addFitControlOptions,
  addIntervalOptions,
  addModelOptions,
  addPlotOption,
  addOutputOptions,
  addReadOptions,
  addSourceOptions,
  addTerminalOptions,
} from "./options.js";

const FILE_ARG = "CSV file, or - for standard input";

/** A fitting command with the options it uses: the model, then any extras, then output, reading and IRLS, terminal. */
function fittingCommand(
  program: Command,
  name: string,
  description: string,
  formats: string,
  extras: (cmd: Command) => Command,
  multiModel = false,
): Command {
  const cmd = program.command(name).description(description).argument("[file]", FILE_ARG);
  return addTerminalOptions(
    addFitControlOptions(addOutputOptions(extras(addModelOptions(cmd, multiModel)), formats, "text")),
  );
}

const EXAMPLES = {
  fit: [
    'tallyfit fit visits.csv --model "visits ~ clinic + weekday" --exposure open_hours',
    'tallyfit fit falls.csv --model "falls ~ ward" --exposure bed_days --family negbin --format json --output fit.json',
    'tallyfit fit visits.csv --model "visits ~ clinic" --exposure open_hours --save-model clinic-model.json --quiet',
  ],
  check: [
    'tallyfit check visits.csv --model "visits ~ clinic + weekday" --exposure open_hours',
    'tallyfit check weekly.csv --model "visits ~ clinic" --exposure open_hours --quiet --format json > check.json || exit 1',
  ],
  run: ["tallyfit run examples/jobs/weekly.yaml", "tallyfit run weekly.json && echo 'no flags this week'"],
  compare: [
    'tallyfit compare visits.csv --exposure open_hours --model "visits ~ clinic" --model "visits ~ clinic + weekday"',
    'tallyfit compare falls.csv --exposure bed_days --model "falls ~ ward" --family poisson --model "falls ~ ward" --family negbin',
  ],
  predict: [
    "tallyfit predict --model-file clinic-model.json week49.csv > week49-flags.csv",
    "tallyfit predict --model-file clinic-model.json week49.csv --format text --summary-by clinic",
    "tallyfit predict --model-file clinic-model.json week49.csv --fail-on-flag --quiet > flags.csv || exit 4",
  ],
};

function withExamples(cmd: Command, lines: string[]): Command {
  return cmd.addHelpText("after", `\nExamples:\n${lines.map((l) => `  ${l}`).join("\n")}\n`);
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

  const fit = fittingCommand(
    program,
    "fit",
    "fit one model and print the report",
    "text, json, csv, markdown or html (one self-contained page)",
    (c) => addPlotOption(addIntervalOptions(c)),
  )
    .option("--alpha <p>", "test level of the dispersion check used by --family auto", "0.05")
    .option("--save-model <file>", "write everything predict needs to FILE (JSON, schema tallyfit.model/1)")
    .option("--summary-by <col>", "observed and expected totals by group, with O/E limits under the fitted family")
    .option("--per <n>", "units of exposure for the crude rates of --summary-by", "1")
    .option(
      "--zero-terms <terms>",
      'the zero part\'s terms for --family zip, zinb, hurdle-poisson or hurdle-negbin, as "a + b" (default: an intercept only)',
    )
    .option(
      "--ratio-per <col=k>",
      "state a numeric term's rate ratio per K units, e.g. staff_on_duty=10 (repeatable)",
      collect,
      [],
    )
    .option(
      "--baseline-at <col=value>",
      "state the baseline rate at this value of a numeric term (default: its mean over the rows used; repeatable)",
      collect,
      [],
    )
    .action(async (file: string | undefined, opts: FitCliOptions) => onResult(await runFit(file, opts)));
  withExamples(fit, EXAMPLES.fit);

  const predict = program
    .command("predict")
    .description("expected counts, limits and excess-count flags for new rows under a saved model")
    .argument("[file]", "CSV file of new rows, or - for standard input")
    .requiredOption("--model-file <file>", "a model saved by tallyfit fit --save-model")
    .option("--level <p>", "level of the mean and prediction intervals", "0.95")
    .option("--flag-level <p>", "flag a row whose count is above this quantile of its predictive distribution", "0.99")
    .option("--draws <n>", "draws of the estimates for the prediction interval", "2000")
    .option("--seed <n>", "seed of those draws", "1")
    .option(
      "--fail-on-flag [what]",
      "exit code 4 when anything is flagged: rows, groups (of --flag-by) or any (the default)",
    )
    .option(
      "--flag-by <col>",
      "also flag groups of rows by their total (a clinic's week: the column that names the group; repeat to combine columns)",
      collect,
      [],
    )
    .option(
      "--skip-bad-rows",
      "skip rows the model cannot predict (a missing value, a level it was not fitted on), naming them, instead of stopping",
    )
    .option("--id <col>", "echo this column with every row's prediction (repeatable)", collect, [])
    .option("--max-model-age <days>", "warn when the model file was written more than this many days ago")
    .option(
      "--adjust <how>",
      "allow for the number of rows or groups tested: none (default), holm (the flag level bounds any false flag) or bh (the share of false flags)",
      "none",
    )
    .option("--summary-by <col>", "observed and expected totals by group (text and JSON output)")
    .option("--per <n>", "units of exposure for the crude rates of --summary-by", "1");
  addTerminalOptions(
    addSourceOptions(
      addReadOptions(
        addOutputOptions(predict, "csv, json, text, markdown or html (one self-contained page)", "csv", "the results"),
      ),
    ),
  ).action(async (file: string | undefined, opts: PredictCliOptions) => onResult(await runPredict(file, opts)));
  withExamples(predict, EXAMPLES.predict);

  const check = fittingCommand(
    program,
    "check",
    "dispersion and zero-count diagnostics of the Poisson model, or with --family negbin|quasipoisson the adequacy of that model; exit code 4 when a test flags",
    "text, json, markdown or html (one self-contained page)",
    (c) =>
      addClusterOption(
        addPlotOption(c),
        "also read whether counts of the same COL move together (share of residual variation between clusters)",
      )
        .option(
          "--order-by <col>",
          "with --cluster: also the lag-1 serial correlation of residuals within clusters in COL's order",
        )
        .option("--zero-terms <terms>", "the zero part's terms when checking a zip, zinb or hurdle model"),
  )
    .option("--alpha <p>", "test level: a test flags when its p-value is below this", "0.05")
    .action(async (file: string | undefined, opts: CheckCliOptions) => onResult(await runCheck(file, opts)));
  withExamples(check, EXAMPLES.check);

  const compare = fittingCommand(
    program,
    "compare",
    "nested-model tests and information criteria for two or more models on the same rows",
    "text, json, markdown or html (one self-contained page)",
    (c) =>
      addClusterOption(
        c,
        "test nested models by Wald F with cluster-robust covariances for rows grouped by COL (repeat for two-way)",
      ).option(
        "--zero-terms <terms>",
        "the zero part's terms of the zip, zinb and hurdle models compared (default: an intercept)",
      ),
    true,
  ).action(async (file: string | undefined, opts: CompareCliOptions) => onResult(await runCompare(file, opts)));
  withExamples(compare, EXAMPLES.compare);

  const run = program
    .command("run")
    .description("fit, check and predict as one job file describes, writing every output together; one exit code")
    .argument("<job>", "a job file (YAML or JSON, schema tallyfit.job/1)");
  run.action(async (job: string) => onResult(await runJob(job, runInProcess)));
  withExamples(run, EXAMPLES.run);
  return program;
}

/** One command line run in this process (a step of `tallyfit run`), its exit code returned. */
async function runInProcess(args: string[]): Promise<number> {
  let code = 0;
  const program = buildProgram((c) => {
    code = c;
  });
  await program.parseAsync(["node", "tallyfit", ...args]);
  return code;
}
