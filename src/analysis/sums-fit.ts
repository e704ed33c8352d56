// The fit → infer composition for rows that stay in the engine: the Poisson
// or quasi-Poisson fit by Newton steps on per-iteration sums, and profile
// limits and term tests by constrained fits on the same sums (the root finder
// of infer/profile.ts; likelihood-ratio or F tests as for the rows).
import type { Design } from "../design/design.js";
import { DEFAULT_CONTROL, type FitSetup, type GlmFit } from "../fit/kernel/types.js";
import type { CountFit } from "../fit/count-fit.js";
import { fitBySums, type SumsAtBeta, type SumsFit } from "../fit/sums-fit.js";
import { profileLimits, type ProfileResult } from "../infer/profile.js";
import { summarizeFit } from "../infer/summary.js";
import { devianceTest, termPlan, type TermTest } from "../infer/terms.js";
import { profileQuantiles } from "../infer/intervals.js";
import type { AnalysisOptions, FitAnalysis } from "./fit.js";
import { readSums, type SqlColumn, type SumsSource, sumsQuery } from "../io/engine-sums.js";
import { openSyncEngine } from "../io/sync-engine.js";

/** The GlmFit record of a fit by sums (no per-row arrays: the rows stayed in the engine). */
function glmFitOf(f: SumsFit, p: number): GlmFit {
  const setup: FitSetup = {
    status: new Array(p).fill("estimated"),
    inFit: new Uint8Array(0),
    active: Int32Array.from({ length: p }, (_, c) => c),
    order: f.free,
    center: new Float64Array(p),
    scale: new Float64Array(p).fill(1),
    rowsAtZero: 0,
  };
  return {
    beta: f.beta,
    status: new Array(p).fill("estimated"),
    estimable: f.free,
    covariance: f.covariance,
    mu: new Float64Array(0),
    eta: new Float64Array(0),
    deviance: f.at.deviance,
    iterations: f.iterations,
    converged: true,
    alpha: 0,
    rowsAtZero: 0,
    warnings: [],
    setup,
    covarianceScaled: f.covariance,
  };
}

export function analyzeBySums(
  design: Design,
  sumsAt: (beta: Float64Array) => SumsAtBeta,
  o: AnalysisOptions & { family: "poisson" | "quasipoisson" },
): FitAnalysis {
  const p = design.matrix.p;
  const ic = design.matrix.interceptCol;
  // Start: the intercept at log(ΣY/ΣE) (from the sums at 0: U₀ = ΣY − ΣE, I₀₀ = ΣE), the rest at 0.
  const zero = new Float64Array(p);
  const at0 = sumsAt(zero);
  const start = new Float64Array(p);
  if (ic >= 0) start[ic] = Math.log((at0.score[ic] + at0.information[ic * p + ic]) / at0.information[ic * p + ic]);
  o.onProgress?.("fitting by per-iteration sums in the engine…");
  const full = fitBySums(p, sumsAt, { start });
  const nullFit =
    ic >= 0
      ? fitBySums(p, sumsAt, {
          start,
          fixed: new Map(
            Array.from({ length: p }, (_, c) => c)
              .filter((c) => c !== ic)
              .map((c) => [c, 0]),
          ),
        })
      : null;
  const figured: Design = {
    ...design,
    collapsed: { ...design.collapsed!, figures: { pearson: full.at.pearson, logLik: full.at.logLik } },
  };
  const mf: CountFit = {
    family: o.family,
    fit: glmFitOf(full, p),
    nullDeviance: nullFit ? nullFit.at.deviance : at0.deviance,
    control: { ...DEFAULT_CONTROL, ...o.control },
    negbin: null,
    patterns: null,
  };
  const quasi = o.family === "quasipoisson";
  const nEff = design.collapsed!.observations;
  const df = nEff - p;
  const phi = quasi ? full.at.pearson / df : 1;
  const devianceHeld = (fixed: Map<number, number>) => fitBySums(p, sumsAt, { start: full.beta, fixed }).at.deviance;

  let profiles: Map<number, ProfileResult> | undefined;
  if (o.intervals !== "wald") {
    const { crit, zq } = profileQuantiles(quasi, df, o.level);
    profiles = new Map();
    for (let c = 0; c < p; c++) {
      const se = Math.sqrt(full.covariance.data[c * p + c] * phi);
      const stat = (b: number) => Math.max(0, devianceHeld(new Map([[c, b]])) - full.at.deviance) / phi;
      profiles.set(c, profileLimits(stat, full.beta[c], zq * se, crit));
    }
  }
  const summary = summarizeFit(figured, mf, {
    level: o.level,
    profiles,
    ratioPer: o.ratioPer,
    baselineAt: o.baselineAt,
  });
  if (o.termTests !== false && design.model.terms.length > 0)
    summary.term_tests = termPlan(design, mf).map((step, ti): TermTest => {
      const term = design.termLabels[ti];
      const test = quasi ? "F" : "LR chi-square";
      if ("note" in step) return { term, df: 0, statistic: null, p_value: null, test, note: step.note };
      const k = step.cols.length;
      const rise = devianceHeld(new Map(step.cols.map((c) => [c, 0]))) - full.at.deviance;
      const { stat, p } = devianceTest(rise, k, quasi ? phi : null, df);
      return { term, df: k, statistic: stat, p_value: p, test, note: null };
    });
  return { countFit: mf, summary, check: null };
}

/** The design's columns as the engine computes them: factor-level indicators times numeric columns. */
export function sqlColumnsOf(design: Design): SqlColumn[] {
  return design.columns.map((col) => ({
    levels: col.levels.map((l) => ({ factor: l.factor, level: l.level })),
    numbers: col.kind === "intercept" ? [] : col.name.split(":").filter((part) => !part.includes("=")),
  }));
}

/** The fit by per-iteration sums in the engine, its queries run from a worker thread (io/sync-engine.ts). */
export function analyzeInEngine(
  design: Design,
  sums: SumsSource,
  o: AnalysisOptions & { family: "poisson" | "quasipoisson" },
): FitAnalysis {
  const engine = openSyncEngine(sums.target);
  try {
    const columns = sqlColumnsOf(design);
    const analysis = analyzeBySums(
      design,
      (beta) => {
        const q = sumsQuery(sums.engine, sums.pieces, columns, beta);
        return readSums(engine.run(q.sql, q.params), columns, sums.constants);
      },
      o,
    );
    const source = analysis.summary.source;
    // The sums queries ran after the design was read: count them and their rows (one per cell) in the source block.
    if (typeof source !== "string")
      analysis.summary.source = {
        ...source,
        queries: source.queries + engine.queries,
        rows_transferred: source.rows_transferred + engine.rows,
      };
    return analysis;
  } finally {
    engine.close();
  }
}
