// tallyfit as a library: every stage of load → design → fit → infer → report.
export { EXIT, FitError, InputError } from "./errors.js";
export type { Column, FactorColumn, NumericColumn, Table } from "./io/table.js";
export { loadTable, parseTable, type LoadOptions } from "./io/csv.js";
export { DEFAULT_NA } from "./io/dialect.js";
export { readSource } from "./io/source-bytes.js";
export { parseFormula, termVariables, type Formula, type Term } from "./formula/formula.js";
export {
  buildDesign,
  type Design,
  type DesignColumn,
  type DesignOptions,
  type FactorCoding,
  type DesignMatrix,
  type Slot,
} from "./design/design.js";
export { naturalCompare } from "./design/naming.js";
export { fitGlm } from "./fit/kernel/glm.js";
export { prepareFit } from "./fit/kernel/setup.js";
export { columnValues } from "./design/matrix-columns.js";
export { DEFAULT_CONTROL, type FitControl, type FitData, type GlmFit } from "./fit/kernel/types.js";
export {
  fitCounts,
  constrainedStatistic,
  nullDeviance,
  type FamilyChoice,
  type FamilyName,
  type CountFit,
} from "./fit/count-fit.js";
export { fitNegbin, negbinLogLik, alphaDerivatives, type NegbinFit } from "./fit/negbin.js";
export { logDensity, unitDeviance, variance } from "./fit/family.js";
export { summarizeFit, type CoefficientRow, type FitSummary, type NegbinSummary } from "./infer/summary.js";
export { fitStatistics, quasiPhi, boundaryLrTest } from "./infer/fit-statistics.js";
export { runChecks, dispersionFlagged, type CheckResult, type CheckTest } from "./infer/check.js";
export { sandwichCovariance } from "./infer/robust.js";
export { analyzeFit, analyzeFitParallel, type AnalysisOptions, type FitAnalysis } from "./analysis/fit.js";
export { analyzeCheck } from "./analysis/check.js";
export { profileAll, profileContext, profileOf, type ProfileContext } from "./infer/intervals.js";
export { inferencePlan, runJob, runJobs, type InferenceJob, type InferencePlan } from "./infer/parallel.js";
export { profileLimits, type ProfileResult } from "./infer/profile.js";
export { brentRoot } from "./math/roots.js";
export * as distributions from "./math/distributions.js";
export { renderFitText, CAUTION } from "./report/fit-text.js";
export { renderFitCsv } from "./report/fit-csv.js";
export { renderFitMarkdown } from "./report/fit-markdown.js";
export { renderJson } from "./report/json.js";
export { makeStyle } from "./report/style.js";
export { loadTableStream, makeReader } from "./io/csv.js";
export { ColumnReader } from "./io/tokenizer.js";
export { parseModelFile, loadModelFile } from "./io/model-file.js";
export { MODEL_FILE_SCHEMA, type ModelFile } from "./io/model-file.js";
export { buildPredictionDesign, type PredictionDesign } from "./design/predict-design.js";
export { layoutColumns } from "./design/design.js";
export { predictRows, type PredictOptions, type PredictResult, type PredictedRow } from "./infer/predict.js";
export { garwoodInterval } from "./infer/garwood.js";
export { poissonCdf, negbinCdf } from "./math/distributions.js";
export { summarizeGroups, type GroupSummary } from "./infer/groups.js";
export { termTests, termTestContext, termTestOf, type TermTest, type TermTestContext } from "./infer/terms.js";
export { compareModels, isNested, type CompareResult } from "./infer/compare.js";
export { rootogram, quantileResiduals, countPmf, type Rootogram } from "./infer/diagnostics.js";
export { diagnosticsOf, fitFamily, patternsFor, MERGE_MIN_ROWS, type MergeChoice } from "./analysis/fit.js";
export { analyzeCheckWithFits } from "./analysis/check.js";
export { mergePatterns, patternKeyFor, type PatternKey, type PatternMerge } from "./design/patterns.js";
export { expandFit } from "./fit/count-fit.js";
export { modelFileOf } from "./report/model-file.js";
export { renderCheckText } from "./report/check-text.js";
export { renderCompareText } from "./report/compare-text.js";
export { renderPredictCsv, renderPredictText } from "./report/predict.js";
export { renderSvg } from "./report/svg.js";
export { svgToPng } from "./report/png.js";
