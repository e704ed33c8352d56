// Shared by the source tests: the models fitted from every source, the
// check that a fit from another source equals the CSV's (1e-9 relative on
// estimates, standard errors, deviance, profile limits and alpha), with the
// JSON's source block naming the engine, and the check of located faults.
import assert from "node:assert/strict";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { ROOT, assertRel, rng, runCli } from "../helpers.js";

/**
 * The bundled example with one continuous column added, outdoor_c (an outdoor
 * temperature from a seeded generator), so that a model can have more
 * covariate patterns than an engine should send back.
 */
export const CLINIC_CSV = join(mkdtempSync(join(tmpdir(), "tallyfit-clinic-")), "clinic_visits_outdoor.csv");
{
  const lines = readFileSync(join(ROOT, "examples", "clinic_visits.csv"), "utf8")
    .trim()
    .split("\n");
  const draw = rng(20261202);
  writeFileSync(
    CLINIC_CSV,
    `${[`${lines[0]},outdoor_c`, ...lines.slice(1).map((l) => `${l},${(2 + 22 * draw()).toFixed(3)}`)].join("\n")}\n`,
  );
}

/** Factor-only, a continuous covariate (Poisson and quasi-Poisson), NB2, and calendar terms. */
export const SOURCE_MODELS: string[][] = [
  ["--model", "visits ~ clinic + weekday"],
  ["--model", "visits ~ clinic + outdoor_c + flu_season"],
  ["--model", "visits ~ clinic + weekday + staff_on_duty", "--family", "negbin"],
  ["--model", "visits ~ clinic", "--date", "date", "--trend"],
  ["--model", "visits ~ clinic * outdoor_c", "--family", "quasipoisson"],
];

/**
 * How an engine should have read each model's rows, worked out here from the
 * CSV: the covariate patterns (their number) for a Poisson model of factors,
 * per-iteration sums when the patterns exceed half the rows, count patterns
 * (rows sharing covariates, count and exposure) for NB2, the rows themselves
 * with calendar terms.
 */
export function expectedPushDown(model: string[]): {
  aggregation: string | null;
  patterns: number | null;
  /** Groups over all rows (a missing value its own value): the patterns, and groups of left-out rows only. */
  groups: number | null;
} {
  if (model.includes("--date")) return { aggregation: null, patterns: null, groups: null };
  const [head, ...rows] = readFileSync(CLINIC_CSV, "utf8")
    .trim()
    .split("\n")
    .map((l) => l.split(","));
  const terms = model[1]
    .split("~")[1]
    .split(/[+*]/)
    .map((t) => t.trim());
  const negbin = model.includes("negbin");
  const keyCols = [...terms, ...(negbin ? ["visits", "open_hours"] : [])].map((t) => head.indexOf(t));
  const used = rows.filter(
    (r) =>
      [...keyCols, head.indexOf("visits"), head.indexOf("open_hours")].every((j) => r[j] !== "NA" && r[j] !== "") &&
      !(Number(r[head.indexOf("open_hours")]) === 0 && Number(r[head.indexOf("visits")]) === 0),
  );
  const keyOf = (r: string[]) => keyCols.map((j) => r[j]).join("\u0000");
  const patterns = new Set(used.map(keyOf)).size;
  const groups = new Set(rows.map(keyOf)).size;
  if (negbin) return { aggregation: "count patterns", patterns, groups };
  return patterns > used.length / 2
    ? { aggregation: "per-iteration sums", patterns: null, groups: null }
    : { aggregation: "covariate patterns", patterns, groups };
}

/** The fit's JSON from a source (a file, or --db/--sql). */
export function fitJson(source: string[], model: string[]) {
  // A convergence rule tighter than the default for both sides: the fits by per-iteration sums run Newton to
  // the end, and near-zero coefficients would otherwise differ by the default rule's slack (about 1e-13).
  const r = runCli([
    "fit",
    ...source,
    ...model,
    "--exposure",
    "open_hours",
    "--tolerance",
    "1e-13",
    "--format",
    "json",
    "--quiet",
  ]);
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
      const expected =
        engine === "csv.gz" ? { aggregation: null, patterns: null, groups: null } : expectedPushDown(model);
      assert.deepEqual(
        [j.source.engine, j.source.pushed_down, j.source.aggregation],
        [engine, expected.aggregation !== null, expected.aggregation],
        `${what}: the source block`,
      );
      if (expected.aggregation === null) assert.equal(j.source.rows_transferred, ref.n_rows, `${what}: rows sent`);
      else if (expected.groups !== null) {
        assert.equal(j.source.rows_transferred, expected.groups, `${what}: one row per group sent`);
        // A factor-only Poisson model: one row per covariate pattern (no group holds only left-out rows).
        if (expected.aggregation === "covariate patterns")
          assert.equal(j.source.rows_transferred, expected.patterns, `${what}: one row per covariate pattern sent`);
      } else assert.ok(j.source.queries > 5, `${what}: one query per iteration (${j.source.queries})`);
      for (const k of ["null_deviance", "pearson_chi2", "log_likelihood", "df_residual", "n_rows"] as const)
        assertRel(j[k], ref[k], 1e-9, `${what}: ${k}`);
      (ref.term_tests ?? []).forEach((t: { term: string; statistic: number | null }, k: number) => {
        assert.equal(j.term_tests[k].term, t.term);
        if (t.statistic !== null) assertRel(j.term_tests[k].statistic, t.statistic, 1e-9, `${what}: test of ${t.term}`);
      });
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
