// Option values that several commands read the same way.
import type { MergeChoice } from "../../analysis/fit.js";
import { oneOf } from "../options.js";

export function mergeChoice(opts: { mergePatterns: string }): MergeChoice {
  return oneOf("--merge-patterns", opts.mergePatterns, ["auto", "always", "never"]);
}
