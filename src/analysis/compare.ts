// The compare command's composition: each model fitted in its family on the same rows, then the tests between them.
import type { Design } from "../design/design.js";
import type { FamilyName } from "../fit/count-fit.js";
import type { FitControl } from "../fit/kernel/types.js";
import { type CompareResult, compareModels } from "../infer/compare.js";
import { fitFamily, type MergeChoice } from "./fit.js";

/** Fit every design in its family (one family for all, or one per design) and compare the fits. */
export function analyzeCompare(
  designs: Design[],
  families: FamilyName[],
  control: Partial<FitControl>,
  merge: MergeChoice,
): CompareResult {
  const entries = designs.map((design, i) => ({
    design,
    mf: fitFamily(design, families.length === 1 ? families[0] : families[i], control, merge),
  }));
  return compareModels(entries);
}
