// Comparing several models fitted on the same rows: likelihood-ratio (or F)
// tests for nested pairs and information criteria for all.
import type { Design } from "../design/design.js";
import type { CountFit } from "../fit/count-fit.js";
import { chiSquareUpperTail, fUpperTail } from "../math/distributions.js";
import { fitStatistics } from "./fit-statistics.js";

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
  test: "LR chi-square" | "F" | "LR chi-square, boundary mixture";
  df: number;
  statistic: number | null;
  p_value: number | null;
  note: string | null;
}

export interface CompareResult {
  schema: "tallyfit.compare/1";
  source: string;
  n_rows: number;
  n_used: number;
  n_dropped: number;
  dropped: { missing: number; zero_exposure_zero_count: number; zero_weight: number };
  models: CompareModel[];
  nested: ComparePair[];
  not_nested: [number, number][];
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

export function compareModels(entries: CompareEntry[]): CompareResult {
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
  for (const crit of ["aic", "bic"] as const) {
    let best = -1;
    models.forEach((m, i) => {
      if (m[crit] !== null && (best < 0 || m[crit]! < models[best][crit]!)) best = i;
    });
    if (best >= 0) models[best].preferred_by.push(crit.toUpperCase());
  }
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
  if (models.some((m) => m.family === "quasipoisson"))
    notes.push("quasi-Poisson has no likelihood, so no AIC or BIC; nested quasi-Poisson models get F tests");
  return {
    schema: "tallyfit.compare/1",
    source: d0.source,
    n_rows: d0.nRows,
    n_used: d0.n,
    n_dropped: d0.nRows - d0.n,
    dropped: {
      missing: d0.dropped.missing,
      zero_exposure_zero_count: d0.dropped.zeroExposureZeroCount,
      zero_weight: d0.dropped.zeroWeight,
    },
    models,
    nested,
    not_nested: notNested,
    notes,
    warnings: [...d0.notices],
  };
}
