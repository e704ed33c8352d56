// tallyfit run JOB: fit → check → predict from one job file, each step run as
// the same command line a user would type, its outputs written to a staging
// folder beside the outputs; only when every step has finished are the files
// moved into the outputs folder, so a failed run leaves the last good outputs
// as they were. One exit code: 0, or 4 when a step flagged and the job says
// that fails the run, or the step's own error code (2 input, 3 no fit).
import { mkdirSync, mkdtempSync, readdirSync, renameSync, rmSync, writeFileSync } from "node:fs";
import { dirname, join, resolve } from "node:path";
import { EXIT, FitError, InputError } from "../../errors.js";
import { ZERO_FAMILIES } from "../../fit/zero-likelihood.js";
import { type JobFile, loadJobFile } from "../../io/job-file.js";

/** Runs one command line (argv after the program name) in this process and returns its exit code. */
export type CommandRunner = (args: string[]) => Promise<number>;

const REPORT_EXT = { text: "txt", json: "json", markdown: "md", html: "html" } as const;
const PREDICT_EXT = { csv: "csv", json: "json", text: "txt", markdown: "md", html: "html" } as const;

/** The data, model and design arguments every fitting step shares. */
function designArgs(job: JobFile, at: (p: string) => string): string[] {
  const d = job.design ?? {};
  const args = [at(job.data), "--model", job.model];
  const opt = (name: string, value: string | undefined) => (value === undefined ? [] : [name, value]);
  args.push(...opt("--exposure", job.exposure), ...opt("--offset", job.offset), ...opt("--weights", job.weights));
  if (d.factor?.length) args.push("--factor", d.factor.join(","));
  for (const [k, v] of Object.entries(d.ref ?? {})) args.push("--ref", `${k}=${v}`);
  for (const [k, v] of Object.entries(d.order ?? {})) args.push("--order", `${k}=${v.join(",")}`);
  args.push(...opt("--date", d.date), ...opt("--na", d.na), ...opt("--delimiter", d.delimiter));
  if (d.trend) args.push("--trend");
  if (d.season) args.push("--season", String(d.season));
  if (d.day_of_week) args.push("--day-of-week");
  if (d.no_intercept) args.push("--no-intercept");
  return args;
}

interface Step {
  name: "fit" | "check" | "predict";
  args: string[];
  outputs: string[];
  /** Whether exit code 4 from this step fails the run. */
  failsOnFlag: boolean;
}

/** The command lines of the job's steps, writing into `stage`. */
export function jobSteps(job: JobFile, jobPath: string, stage: string): Step[] {
  const base = dirname(resolve(jobPath));
  const at = (p: string) => resolve(base, p);
  const report = job.outputs.report ?? "text";
  const fitOut = `fit.${REPORT_EXT[report]}`;
  const f = job.fit ?? {};
  const family = job.family ?? "poisson";
  const fitArgs = [
    "fit",
    ...designArgs(job, at),
    "--family",
    family,
    "--format",
    report,
    "--output",
    join(stage, fitOut),
    "--save-model",
    join(stage, "model.json"),
    "--quiet",
  ];
  if (job.zero_terms) fitArgs.push("--zero-terms", job.zero_terms);
  if (f.level !== undefined) fitArgs.push("--level", String(f.level));
  if (f.intervals) fitArgs.push("--intervals", f.intervals);
  if (f.robust) fitArgs.push("--robust");
  for (const c of f.cluster ?? []) fitArgs.push("--cluster", c);
  for (const [k, v] of Object.entries(f.ratio_per ?? {})) fitArgs.push("--ratio-per", `${k}=${v}`);
  for (const [k, v] of Object.entries(f.baseline_at ?? {})) fitArgs.push("--baseline-at", `${k}=${v}`);
  const steps: Step[] = [{ name: "fit", args: fitArgs, outputs: [fitOut, "model.json"], failsOnFlag: false }];

  const c = job.check ?? {};
  if (c.run !== false) {
    // The check tests the model in use: the fitted family unless the job names another (auto: the Poisson check).
    const checked = c.family ?? (family === "auto" ? "poisson" : family);
    // check writes every format but CSV, the same as the fit's report.
    const checkFormat = report;
    const checkOut = `check.${REPORT_EXT[checkFormat]}`;
    const args = [
      "check",
      ...designArgs(job, at),
      "--family",
      checked,
      "--format",
      checkFormat,
      "--output",
      join(stage, checkOut),
      "--quiet",
    ];
    if (job.zero_terms && (ZERO_FAMILIES as readonly string[]).includes(checked))
      args.push("--zero-terms", job.zero_terms);
    if (c.cluster) args.push("--cluster", c.cluster);
    if (c.order_by) args.push("--order-by", c.order_by);
    if (c.alpha !== undefined) args.push("--alpha", String(c.alpha));
    steps.push({ name: "check", args, outputs: [checkOut], failsOnFlag: c.fail_on_flag !== false });
  }

  const p = job.predict;
  if (p) {
    const format = job.outputs.predictions ?? "csv";
    const out = `predictions.${PREDICT_EXT[format]}`;
    const args = [
      "predict",
      "--model-file",
      join(stage, "model.json"),
      at(p.data),
      "--format",
      format,
      "--output",
      join(stage, out),
      "--quiet",
    ];
    for (const g of p.flag_by ?? []) args.push("--flag-by", g);
    for (const i of p.id ?? []) args.push("--id", i);
    if (p.flag_level !== undefined) args.push("--flag-level", String(p.flag_level));
    if (p.adjust) args.push("--adjust", p.adjust);
    if (p.skip_bad_rows) args.push("--skip-bad-rows");
    if (p.max_model_age !== undefined) args.push("--max-model-age", String(p.max_model_age));
    if (p.draws !== undefined) args.push("--draws", String(p.draws));
    if (p.seed !== undefined) args.push("--seed", String(p.seed));
    const failOn = p.fail_on_flag ?? "any";
    if (failOn !== "none") args.push("--fail-on-flag", failOn);
    steps.push({ name: "predict", args, outputs: [out], failsOnFlag: failOn !== "none" });
  }
  return steps;
}

export async function runJob(jobPath: string, run: CommandRunner): Promise<number> {
  const job = loadJobFile(jobPath);
  const dir = resolve(dirname(resolve(jobPath)), job.outputs.dir);
  try {
    mkdirSync(dir, { recursive: true });
  } catch (e) {
    throw new InputError(`${jobPath}: outputs.dir ${dir} cannot be made (${(e as NodeJS.ErrnoException).code}).`);
  }
  const stage = mkdtempSync(join(dir, ".tallyfit-run-"));
  try {
    const results: { step: string; exit_code: number; flagged: boolean; outputs: string[] }[] = [];
    let code: number = EXIT.ok;
    for (const step of jobSteps(job, jobPath, stage)) {
      let c: number;
      try {
        c = await run(step.args);
      } catch (e) {
        // The step's own message, with the job and step named; its exit code is kept (2 input, 3 no fit).
        const message = `${jobPath}, step ${step.name}: ${(e as Error).message}`;
        throw e instanceof FitError ? new FitError(message) : e instanceof InputError ? new InputError(message) : e;
      }
      if (c !== EXIT.ok && c !== EXIT.flagged)
        throw new InputError(`${jobPath}, step ${step.name} ended with exit code ${c}.`);
      results.push({ step: step.name, exit_code: c, flagged: c === EXIT.flagged, outputs: step.outputs });
      if (c === EXIT.flagged && step.failsOnFlag) code = EXIT.flagged;
    }
    const summary = {
      schema: "tallyfit.run/1",
      job: jobPath,
      exit_code: code,
      steps: results,
      outputs: [...results.flatMap((r) => r.outputs), "run.json"],
    };
    writeFileSync(join(stage, "run.json"), `${JSON.stringify(summary, null, 2)}\n`);
    // Every step finished: move the outputs into place together.
    for (const name of readdirSync(stage)) renameSync(join(stage, name), join(dir, name));
    process.stderr.write(
      `tallyfit run: ${results.map((r) => `${r.step} ${r.flagged ? "flagged" : "ok"}`).join(", ")}; outputs in ${dir}; exit code ${code}\n`,
    );
    return code;
  } finally {
    rmSync(stage, { recursive: true, force: true });
  }
}
