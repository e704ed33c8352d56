// tallyfit as a library: every stage of load → design → fit → infer → report.
export { EXIT, FitError, InputError } from "./errors.js";
export type { Column, FactorColumn, NumericColumn, Table } from "./io/table.js";
export { DEFAULT_NA, loadTable, parseTable, readSource, type LoadOptions } from "./io/csv.js";
export { parseModel, termVariables, type ModelSpec, type Term } from "./model/formula.js";
export { buildDesign, type Design, type DesignColumn, type DesignOptions, type FactorCoding, type ModelMatrix, type Slot } from "./design/design.js";
export { naturalCompare } from "./design/naming.js";
export { fitGlm, prepareFit, columnValues, DEFAULT_CONTROL, type FitControl, type FitData, type GlmFit } from "./fit/irls.js";
export { fitModel, constrainedStatistic, type FamilyChoice, type ModelFit } from "./fit/model.js";
export { logDensity, unitDeviance, variance } from "./fit/family.js";
export { summarizeFit, fitStatistics, poissonNullDeviance, quasiPhi, type CoefficientRow, type FamilyName, type FitSummary } from "./infer/summary.js";
export { profileAll } from "./infer/intervals.js";
export { profileLimits, type ProfileResult } from "./infer/profile.js";
export { brentRoot } from "./infer/roots.js";
export * as distributions from "./infer/distributions.js";
export { renderFitText, CAUTION } from "./report/fit-text.js";
export { renderFitCsv, renderFitMarkdown, renderJson } from "./report/fit-tabular.js";
export { makeStyle } from "./report/style.js";
