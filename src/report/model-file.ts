// Writing the saved-model record from a fit.
import { rowsUsed } from "../design/collapsed.js";
import { isoDate } from "../design/calendar.js";
import type { Design } from "../design/design.js";
import type { CountFit } from "../fit/count-fit.js";
import type { ClusterCovariance } from "../infer/cluster.js";
import { quasiPhi } from "../infer/fit-statistics.js";
import { MODEL_FILE_SCHEMA, type ModelFile } from "../io/model-file.js";

/**
 * The model file of a fit; noEventsUpper gives, by design column, the upper
 * profile limit (log scale, at `level`) of each level with no events.
 */
export function modelFileOf(
  design: Design,
  mf: CountFit,
  meta: { version: string; sha256: string },
  noEventsUpper: { level: number; limits: Map<number, number | null> } = { level: 0.95, limits: new Map() },
  cluster?: ClusterCovariance,
): ModelFile {
  const fit = mf.fit;
  const est = fit.estimable;
  const q = fit.covariance.p;
  return {
    ...modelHeadOf(design, meta, mf.family),
    coefficients: design.columns.map((c, j) => {
      const st = fit.status[j];
      const status = st === "estimated" ? "estimated" : st === "no_events" ? "no_events" : "aliased";
      if (st === "no_events")
        return {
          term: c.name,
          status,
          estimate: null,
          upper_limit: noEventsUpper.limits.get(j) ?? null,
          upper_limit_level: noEventsUpper.level,
        };
      return { term: c.name, status, estimate: st === "estimated" ? fit.beta[j] : null };
    }),
    covariance: {
      terms: est.map((c) => design.columns[c].name),
      // predict draws the coefficients from the covariance the fit reported: cluster-robust with --cluster.
      matrix: Array.from({ length: q }, (_, r) =>
        Array.from({ length: q }, (_, c) => (cluster ? cluster.covariance : fit.covariance).data[r * q + c]),
      ),
      type: cluster ? cluster.type : "model",
      ...(cluster ? { clusters: cluster.clusters } : {}),
    },
    dispersion_phi: mf.family === "quasipoisson" ? quasiPhi(design, fit) : 1,
    alpha: mf.negbin ? mf.negbin.alpha : null,
    alpha_std_error: mf.negbin ? mf.negbin.alphaStdError : null,
    ...calendarOf(design),
  };
}

/** The variables of a design's model: its terms, factors with levels and reference, and numeric variables. */
export function modelVariablesOf(design: Design): Pick<ModelFile, "intercept" | "terms" | "factors" | "numeric"> {
  const factorNames = new Set(design.factors.map((f) => f.name));
  const numeric: string[] = [];
  for (const t of design.model.terms)
    for (const v of t.variables) if (!factorNames.has(v) && !numeric.includes(v)) numeric.push(v);
  return {
    intercept: design.model.intercept,
    terms: design.model.terms.map((t) => [...t.variables]),
    factors: design.factors.map((f) => ({ name: f.name, levels: [...f.levels], reference: f.reference })),
    numeric,
  };
}

/** What every model file starts with: the tool, the data, the family, the model and its variables (in file order). */
export function modelHeadOf(
  design: Design,
  meta: { version: string; sha256: string },
  family: ModelFile["family"],
): Pick<
  ModelFile,
  | "schema"
  | "tool"
  | "data"
  | "family"
  | "link"
  | "model"
  | "response"
  | "intercept"
  | "terms"
  | "exposure"
  | "offset"
  | "factors"
  | "numeric"
> {
  const v = modelVariablesOf(design);
  return {
    schema: MODEL_FILE_SCHEMA,
    tool: { name: "tallyfit", version: meta.version },
    data: { source: design.source, sha256: meta.sha256, n_rows: design.nRows, n_used: rowsUsed(design) },
    family,
    link: "log",
    model: design.model.text,
    response: design.model.response,
    intercept: v.intercept,
    terms: v.terms,
    exposure: design.exposureName,
    offset: design.offsetName,
    factors: v.factors,
    numeric: v.numeric,
  };
}

/** The calendar entry of a design made with --date (none otherwise). */
export function calendarOf(design: Design): Pick<ModelFile, "calendar"> {
  return design.calendar
    ? {
        calendar: {
          column: design.calendar.column,
          first_date: isoDate(design.calendar.firstDay),
          last_date: isoDate(design.calendar.lastDay),
          trend: design.calendar.trend,
          season: design.calendar.season,
          day_of_week: design.calendar.dayOfWeek,
        },
      }
    : {};
}
