// The compare command's composition: each model fitted in its family on the same rows, then the tests between them.
import type { Design } from "../design/design.js";
import type { FamilyName } from "../fit/count-fit.js";
import type { FitControl } from "../fit/kernel/types.js";
import { type Clustering, clusterCovariance } from "../infer/cluster.js";
import { type CompareResult, compareModels } from "../infer/compare.js";
import { fitFamily, type MergeChoice } from "./fit.js";

/** Fit every design in its family (one family for all, or one per design) and compare the fits (under clustering with --cluster). */
export function analyzeCompare(
  designs: Design[],
  families: FamilyName[],
  control: Partial<FitControl>,
  merge: MergeChoice,
  clusters?: Clustering[],
): CompareResult {
  const entries = designs.map((design, i) => ({
    design,
    mf: fitFamily(design, families.length === 1 ? families[0] : families[i], control, merge),
  }));
  // Every design has the same rows (compare builds them on the rows complete for all), so one clustering serves all.
  const clustered = clusters?.length ? entries.map((e) => clusterCovariance(e.design, e.mf.fit, clusters)) : undefined;
  return compareModels(entries, clustered);
}
