// Shared by the source tests: the models fitted from every source, the
// check that a fit from another source equals the CSV's (1e-9 relative on
// estimates, standard errors, deviance, profile limits and alpha), with the
// JSON's source block naming the engine, and the check of located faults.
import assert from "node:assert/strict";
import { join } from "node:path";
import { ROOT, assertRel, runCli } from "../helpers.js";

export const CLINIC_CSV = join(ROOT, "examples", "clinic_visits.csv");

/** Factor-only, a continuous covariate, NB2, and calendar terms. */
export const SOURCE_MODELS: string[][] = [
  ["--model", "visits ~ clinic + weekday"],
  ["--model", "visits ~ clinic + staff_on_duty + flu_season"],
  ["--model", "visits ~ clinic + weekday + staff_on_duty", "--family", "negbin"],
  ["--model", "visits ~ clinic", "--date", "date", "--trend"],
];

/** The fit's JSON from a source (a file, or --db/--sql). */
export function fitJson(source: string[], model: string[]) {
  const r = runCli(["fit", ...source, ...model, "--exposure", "open_hours", "--format", "json", "--quiet"]);
  assert.equal(r.code, 0, r.stderr);
  return JSON.parse(r.stdout);
}

/**
 * Every model fitted from each source equals the CSV's fit (fitted once per
 * model); the source block names the engine; `each` adds checks of a fit.
 */
export function assertSameFits(
  sources: [engine: string, args: string[]][],
  models = SOURCE_MODELS,
  each?: (fit: ReturnType<typeof fitJson>, ref: ReturnType<typeof fitJson>) => void,
): void {
  for (const model of models) {
    const ref = fitJson([CLINIC_CSV], model);
    for (const [engine, source] of sources) {
      const j = fitJson(source, model);
      const what = `${model.join(" ")} from ${engine}`;
      each?.(j, ref);
      assert.equal(j.n_used, ref.n_used, `${what}: rows used`);
      assert.deepEqual(
        [j.source.engine, j.source.pushed_down, j.source.rows_transferred],
        [engine, false, ref.n_rows],
        `${what}: the source block`,
      );
      assertRel(j.deviance, ref.deviance, 1e-9, `${what}: deviance`);
      j.coefficients.forEach(
        (c: { term: string; estimate: number; std_error: number; profile: number[] }, k: number) => {
          const e = ref.coefficients[k];
          assert.equal(c.term, e.term);
          assertRel(c.estimate, e.estimate, 1e-9, `${what}: ${c.term}`);
          assertRel(c.std_error, e.std_error, 1e-9, `${what}: SE ${c.term}`);
          if (e.profile) {
            assertRel(c.profile[0], e.profile[0], 1e-9, `${what}: lower profile ${c.term}`);
            assertRel(c.profile[1], e.profile[1], 1e-9, `${what}: upper profile ${c.term}`);
          }
        },
      );
      if (ref.negbin) assertRel(j.negbin.alpha, ref.negbin.alpha, 1e-9, `${what}: alpha`);
    }
  }
}

/** Each command fails with exit 2 and a message matching its pattern, with no stack trace and no password. */
export function assertLocatedFaults(cases: [string[], RegExp][]): void {
  for (const [args, re] of cases) {
    const r = runCli(args);
    assert.equal(r.code, 2, `${args.join(" ")}: ${r.stderr}`);
    assert.match(r.stderr, re);
    assert.doesNotMatch(r.stderr, /s3cret|\n\s+at /);
  }
}
