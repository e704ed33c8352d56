// Comparing several models fitted on the same rows: likelihood-ratio (or F)
// tests for nested pairs and information criteria for all.
import { rowsUsed } from "../design/collapsed.js";
import type { Design } from "../design/design.js";
import type { CountFit } from "../fit/count-fit.js";
import { chiSquareUpperTail, fUpperTail } from "../math/distributions.js";
import type { ClusterCovariance } from "./cluster.js";
import { fitStatistics } from "./fit-statistics.js";
import { waldStatistic } from "./wald-terms.js";
import { type Source, sourceOf } from "./source.js";

export interface CompareEntry {
  design: Design;
  mf: CountFit;
}

export interface CompareModel {
  index: number;
  model: string;
  family: string;
  n_parameters: number;
  log_likelihood: number | null;
  deviance: number;
  df_residual: number;
  aic: number | null;
  bic: number | null;
  preferred_by: string[];
}

export interface ComparePair {
  smaller: number;
  larger: number;
  test: "LR chi-square" | "F" | "LR chi-square, boundary mixture" | "Wald F";
  df: number;
  statistic: number | null;
  p_value: number | null;
  note: string | null;
}

export interface CompareResult {
  schema: "tallyfit.compare/1";
  source: Source;
  n_rows: number;
  n_used: number;
  n_dropped: number;
  dropped: { missing: number; zero_exposure_zero_count: number; zero_weight: number };
  models: CompareModel[];
  nested: ComparePair[];
  not_nested: [number, number][];
  /** With --cluster: the covariance the nested pairs' Wald tests use. */
  covariance?: { type: string; clusters: { column: string; count: number }[]; t_df: number };
  notes: string[];
  warnings: string[];
}

const key = (vars: string[]) => [...vars].sort().join("\u0000");

/** Whether model a is nested in model b: same response and offset, a's terms among b's, families compatible. */
export function isNested(a: CompareEntry, b: CompareEntry): boolean {
  const da = a.design,
    db = b.design;
  if (da.model.response !== db.model.response) return false;
  if (da.model.intercept && !db.model.intercept) return false;
  const kb = new Set(db.model.terms.map((t) => key(t.variables)));
  if (!da.model.terms.every((t) => kb.has(key(t.variables)))) return false;
  const fa = a.mf.family,
    fb = b.mf.family;
  if (fa === fb) return true;
  return fa === "poisson" && fb === "negbin";
}

function params(e: CompareEntry): number {
  return fitStatistics(e.design, e.mf.fit, e.mf.family === "negbin").nPar;
}

/** The larger model's estimated columns that the smaller lacks (its extra terms, and the intercept if only it has one). */
function extraColumns(a: CompareEntry, b: CompareEntry): { cols: number[]; noEvents: boolean } {
  const keysA = new Set(a.design.model.terms.map((t) => key(t.variables)));
  const cols: number[] = [];
  let noEvents = false;
  b.design.columns.forEach((col, c) => {
    const extra = col.term < 0 ? !a.design.model.intercept : !keysA.has(key(b.design.model.terms[col.term].variables));
    if (!extra) return;
    if (b.mf.fit.status[c] === "no_events") noEvents = true;
    if (b.mf.fit.status[c] === "estimated") cols.push(c);
  });
  return { cols, noEvents };
}

/** Mark the model with the smallest AIC, and with the smallest BIC, in its preferred_by. */
export function markPreferred(models: CompareModel[]): void {
  for (const crit of ["aic", "bic"] as const) {
    let best = -1;
    models.forEach((m, i) => {
      if (m[crit] !== null && (best < 0 || m[crit]! < models[best][crit]!)) best = i;
    });
    if (best >= 0) models[best].preferred_by.push(crit.toUpperCase());
  }
}

/**
 * Under clustering, a nested pair is tested by the Wald F of the larger
 * model's extra columns with its cluster-robust covariance, F = W/df on
 * (df, G − 1) (Cameron and Miller 2015, §VI.B); likelihood-ratio tests assume
 * independent rows.
 */
function clusteredPair(
  a: CompareEntry,
  b: CompareEntry,
  cov: ClusterCovariance,
): Omit<ComparePair, "smaller" | "larger"> {
  const test = "Wald F" as const;
  if (a.mf.family !== b.mf.family)
    return {
      test,
      df: 0,
      statistic: null,
      p_value: null,
      note: "the families differ: the extra parameter (alpha) has no cluster-robust Wald test",
    };
  const { cols, noEvents } = extraColumns(a, b);
  if (noEvents)
    return {
      test,
      df: 0,
      statistic: null,
      p_value: null,
      note: "a level of an extra term has no events: its estimate is not finite and a Wald test does not exist",
    };
  if (cols.length === 0)
    return { test, df: 0, statistic: null, p_value: null, note: "no extra estimated columns: compare by the criteria" };
  const w = waldStatistic(b.mf, cov.covariance, cols);
  if (w === null)
    return {
      test,
      df: 0,
      statistic: null,
      p_value: null,
      note: "the extra columns' covariance is singular; no Wald test",
    };
  const f = w / cols.length;
  return {
    test,
    df: cols.length,
    statistic: f,
    p_value: fUpperTail(f, cols.length, cov.df),
    note: `cluster-robust covariance of the larger model; F on (${cols.length}, ${cov.df}) df`,
  };
}

/**
 * Compare fits on the same rows; with `clustered` (one cluster-robust
 * covariance per entry, from --cluster) nested pairs get cluster-robust Wald F tests.
 */
export function compareModels(entries: CompareEntry[], clustered?: ClusterCovariance[]): CompareResult {
  const stats = entries.map((e) => fitStatistics(e.design, e.mf.fit, e.mf.family === "negbin"));
  const models: CompareModel[] = entries.map((e, i) => {
    const quasi = e.mf.family === "quasipoisson";
    return {
      index: i + 1,
      model: e.design.model.text,
      family: e.mf.family,
      n_parameters: stats[i].nPar,
      log_likelihood: quasi ? null : stats[i].logLik,
      deviance: e.mf.fit.deviance,
      df_residual: stats[i].df,
      aic: quasi ? null : stats[i].aic,
      bic: quasi ? null : stats[i].bic,
      preferred_by: [],
    };
  });
  markPreferred(models);
  const nested: ComparePair[] = [];
  const notNested: [number, number][] = [];
  for (let i = 0; i < entries.length; i++)
    for (let j = 0; j < entries.length; j++) {
      if (i === j) continue;
      if (!isNested(entries[i], entries[j])) {
        if (i < j && !isNested(entries[j], entries[i])) notNested.push([i + 1, j + 1]);
        continue;
      }
      if (isNested(entries[j], entries[i]) && j < i) continue; // identical: listed once
      const a = entries[i],
        b = entries[j];
      if (clustered) {
        nested.push({ smaller: i + 1, larger: j + 1, ...clusteredPair(a, b, clustered[j]) });
        continue;
      }
      const df = params(b) - params(a);
      if (df <= 0) {
        nested.push({
          smaller: i + 1,
          larger: j + 1,
          test: "LR chi-square",
          df,
          statistic: null,
          p_value: null,
          note: "the same number of parameters (the same column space): compare by the criteria",
        });
        continue;
      }
      if (a.mf.family === "quasipoisson") {
        const phi = stats[j].pearson / stats[j].df;
        const f = Math.max(0, (a.mf.fit.deviance - b.mf.fit.deviance) / df / phi);
        nested.push({
          smaller: i + 1,
          larger: j + 1,
          test: "F",
          df,
          statistic: f,
          p_value: fUpperTail(f, df, stats[j].df),
          note: `F on (${df}, ${stats[j].df}) df with φ from the larger model`,
        });
        continue;
      }
      const lr = Math.max(0, 2 * (stats[j].logLik - stats[i].logLik));
      if (a.mf.family === "poisson" && b.mf.family === "negbin") {
        // One parameter (alpha) on its boundary: a 50:50 mixture of chi-square(df − 1) and chi-square(df) (Self and Liang 1987).
        const p = lr === 0 ? 1 : 0.5 * (df > 1 ? chiSquareUpperTail(lr, df - 1) : 0) + 0.5 * chiSquareUpperTail(lr, df);
        nested.push({
          smaller: i + 1,
          larger: j + 1,
          test: "LR chi-square, boundary mixture",
          df,
          statistic: lr,
          p_value: p,
          note: "alpha = 0 is on the boundary: ½·chi-square(df − 1) + ½·chi-square(df)",
        });
        continue;
      }
      nested.push({
        smaller: i + 1,
        larger: j + 1,
        test: "LR chi-square",
        df,
        statistic: lr,
        p_value: chiSquareUpperTail(lr, df),
        note: null,
      });
    }
  const d0 = entries[0].design;
  const notes: string[] = [];
  if (notNested.length) notes.push("models that are not nested are compared by AIC and BIC only");
  if (clustered)
    notes.push(
      "with --cluster the nested pairs are tested by Wald F with the larger model's cluster-robust covariance; the log-likelihoods, AIC and BIC assume independent rows, so here they describe the fit but do not account for the clustering",
    );
  if (models.some((m) => m.family === "quasipoisson"))
    notes.push("quasi-Poisson has no likelihood, so no AIC or BIC; nested quasi-Poisson models get F tests");
  return {
    schema: "tallyfit.compare/1",
    source: sourceOf(d0),
    n_rows: d0.nRows,
    n_used: rowsUsed(d0),
    n_dropped: d0.nRows - rowsUsed(d0),
    dropped: {
      missing: d0.dropped.missing,
      zero_exposure_zero_count: d0.dropped.zeroExposureZeroCount,
      zero_weight: d0.dropped.zeroWeight,
    },
    models,
    nested,
    not_nested: notNested,
    ...(clustered
      ? { covariance: { type: clustered[0].type, clusters: clustered[0].clusters, t_df: clustered[0].df } }
      : {}),
    notes,
    warnings: [...d0.notices],
  };
}
