// tallyfit as a library, grouped by stage (load → design → fit → infer →
// report), plus the compositions the commands run. What is exported here is
// what a library user calls; everything else is internal and may change.

// Errors and exit codes.
export { EXIT, FitError, InputError } from "./errors.js";

// Load: CSV text or files into typed columns; model files.
export { loadTable, parseTable, type LoadOptions } from "./io/csv.js";
export { loadDuckDbQuery, loadParquet, openDuckDb, openParquet } from "./io/duckdb-table.js";
export { loadPostgresQuery, openPostgres } from "./io/postgres-table.js";
export { loadClickHouseQuery, openClickHouse } from "./io/clickhouse-table.js";
// Engines and push-down, across the stages: the engine surface and its queries (load), the designs of
// engine-merged patterns (design), the fit on per-iteration sums (fit) and its composition (analysis).
export type { Engine, EngineRows } from "./io/engine.js";
export { loadEngineRows } from "./io/engine-rows.js";
export { pushDown, type PushDown, type PushDownRequest } from "./io/push-down.js";
export { sumsQuery, readSums, type SqlColumn, type SumsSource } from "./io/engine-sums.js";
export { openSyncEngine } from "./io/sync-engine.js";
export { collapsedDesign, rowDeviance, rowsUsed } from "./design/collapsed.js";
export { skeletonTable } from "./design/skeleton.js";
export { fitBySums } from "./fit/sums-fit.js";
export { analyzeBySums, analyzeInEngine, sqlColumnsOf } from "./analysis/sums-fit.js";
export { DEFAULT_NA } from "./io/dialect.js";
export type { Column, FactorColumn, NumericColumn, Table } from "./io/table.js";
export { loadModelFile, parseModelFile, MODEL_FILE_SCHEMA, type ModelFile } from "./io/model-file.js";
export { loadJobFile, parseJobFile, JOB_FILE_SCHEMA, type JobFile } from "./io/job-file.js";

// Formula: "COUNT ~ TERMS" into a list of terms.
export { parseFormula, termVariables, type Formula, type Term } from "./formula/formula.js";

// Design: columns and terms into the design matrix; merged covariate patterns; new rows under a model file.
export {
  buildDesign,
  type Design,
  type DesignColumn,
  type DesignMatrix,
  type DesignOptions,
  type FactorCoding,
} from "./design/design.js";
export { mergePatterns, type PatternMerge } from "./design/patterns.js";
export { buildPredictionDesign, type PredictionDesign } from "./design/predict-design.js";
export { clusteringOf, orderKeyOf, type Clustering } from "./design/clusters.js";
export { parseDay, type Calendar, type CalendarOptions } from "./design/calendar.js";

// Fit: the count families by IRLS (and NB2 alpha by maximum likelihood).
export { fitCounts, type CountFit, type FamilyChoice, type FamilyName } from "./fit/count-fit.js";
export { fitGlm } from "./fit/kernel/glm.js";
export { DEFAULT_CONTROL, type FitControl, type FitData, type GlmFit } from "./fit/kernel/types.js";
export { logDensity, unitDeviance, variance } from "./fit/family.js";
export { fitGee, type GeeFit, type GeeOptions } from "./fit/gee.js";
export { WORKING_CORRELATIONS, type WorkingCorrelation } from "./fit/working-correlation.js";
export { fitZeroModel, type ZeroFit, type ZeroFitOptions } from "./fit/zero-fit.js";
export { profileZeroModel, type ZeroProfile } from "./fit/zero-profile.js";
export { ZERO_FAMILIES, type ZeroFamily } from "./fit/zero-likelihood.js";

// Infer: the figures users publish and check.
export { summarizeFit, type CoefficientRow, type FitSummary, type NegbinSummary } from "./infer/summary.js";
export { profileAll } from "./infer/intervals.js";
export type { ProfileResult } from "./infer/profile.js";
export { termTests, type TermTest } from "./infer/terms.js";
export { sandwichCovariance } from "./infer/robust.js";
export { clusterCovariance, type ClusterCovariance } from "./infer/cluster.js";
export { geeCovariance, type GeeSummary } from "./infer/gee-inference.js";
export { dependenceReading, type DependenceReading } from "./infer/dependence.js";
export { runModelChecks, momentChecks, type ModelMoments } from "./infer/model-check.js";
export { summarizeZeroFit, zeroMoments } from "./infer/zero-summary.js";
export { seasonalityOf, type Seasonality } from "./infer/seasonality.js";
export { groupFlags, type GroupFlags } from "./infer/group-flags.js";
export { negbinSumPmf } from "./infer/negbin-sum.js";
export { holm, benjaminiHochberg, type Adjustment } from "./infer/multiplicity.js";
export { runChecks, withDependence, type CheckResult, type CheckTest } from "./infer/check.js";
export { compareModels, type CompareResult } from "./infer/compare.js";
export type { PredictOptions, PredictResult, PredictedRow } from "./infer/predict.js";
export { predictRows } from "./infer/predict-range.js";
export { summarizeGroups, type GroupSummary } from "./infer/groups.js";
export { garwoodInterval } from "./infer/garwood.js";
export { rootogram, quantileResiduals, type Rootogram } from "./infer/diagnostics.js";

// Report: text, JSON, CSV, Markdown, pictures and the model file.
export { renderFitText, CAUTION } from "./report/fit-text.js";
export { renderFitCsv } from "./report/fit-csv.js";
export { checkPage, comparePage, fitPage, predictPage, type PageFormat } from "./report/pages.js";
export { HtmlSink, escapeHtml } from "./report/html-sink.js";
export { MarkdownSink, escapeMarkdown } from "./report/markdown-sink.js";
export { TextSink, type ReportSink } from "./report/sink.js";
export { renderJson } from "./report/json.js";
export { renderCheckText } from "./report/check-text.js";
export { renderCompareText } from "./report/compare-text.js";
export { renderZeroText } from "./report/zero-text.js";
export { renderPredictCsv, renderPredictText } from "./report/predict.js";
export { renderSvg } from "./report/svg.js";
export { svgToPng } from "./report/png.js";
export { modelFileOf } from "./report/model-file.js";
export { zeroModelFileOf, type ZeroCovarianceKind } from "./report/zero-model-file.js";
export { makeStyle } from "./report/style.js";

// The commands' compositions of the stages.
export {
  analyzeFit,
  analyzeFitParallel,
  diagnosticsOf,
  type AnalysisOptions,
  type FitAnalysis,
  type MergeChoice,
} from "./analysis/fit.js";
export { analyzeCheck } from "./analysis/check.js";
export { analyzeCompare } from "./analysis/compare.js";
export { analyzeZeroFit, type ZeroAnalysis } from "./analysis/zero-fit.js";
export { analyzePredict, type PredictAnalysis } from "./analysis/predict.js";

// Numerics: tail probabilities and quantiles of the reference distributions.
export * as distributions from "./math/distributions.js";
