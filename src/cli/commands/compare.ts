// tallyfit compare: two or more models on the same rows.
import { analyzeCompare } from "../../analysis/compare.js";
import { clusteringOf } from "../../design/clusters.js";
import { EXIT, InputError } from "../../errors.js";
import type { FamilyName } from "../../fit/count-fit.js";
import { ZERO_FAMILIES, type ZeroFamily } from "../../fit/zero-likelihood.js";
import { formulaText, parseFormula } from "../../formula/formula.js";
import { renderCompareText } from "../../report/compare-text.js";
import { comparePage } from "../../report/pages.js";
import { renderJson } from "../../report/json.js";
import { loadDesigns } from "../input.js";
import { type ModelOptions, oneOf } from "../options.js";
import { finish, textLayout } from "../output.js";
import { displaySafe } from "../../report/safe-text.js";
import { RunOutputs } from "../run-outputs.js";
import { mergeChoice } from "./shared.js";

export type CompareCliOptions = ModelOptions & { family: string[]; cluster: string[]; zeroTerms?: string };

export async function runCompare(file: string | undefined, opts: CompareCliOptions): Promise<number> {
  if (opts.model.length < 2) throw new InputError("compare needs two or more --model options.");
  oneOf("--format", opts.format, ["text", "json", "markdown", "html"]);
  const given = opts.family.length === 0 ? ["poisson"] : opts.family;
  if (given.length !== 1 && given.length !== opts.model.length)
    throw new InputError(
      `give --family once (for all models) or once per --model (${opts.model.length} times); got it ${given.length} times.`,
    );
  const families = given.map((f) =>
    oneOf<FamilyName | ZeroFamily>("--family", f, ["poisson", "negbin", "quasipoisson", ...ZERO_FAMILIES]),
  );
  const anyZero = families.some((f) => (ZERO_FAMILIES as readonly string[]).includes(f));
  if (anyZero && opts.cluster.length)
    throw new InputError(
      "compare --cluster does not take the zero-inflated and hurdle families yet; compare them without it.",
    );
  if (opts.zeroTerms && !anyZero)
    throw new InputError(
      "--zero-terms describes the zero part of zip, zinb, hurdle-poisson or hurdle-negbin models; give one of those families.",
    );
  const zeroTerms = opts.zeroTerms?.trim() || "1";
  const merge = mergeChoice(opts);
  const outputs = new RunOutputs([file ?? "-"]);
  if (opts.output) outputs.claim(opts.output, "--output");
  if (opts.cluster.length > 2) throw new InputError("--cluster is given once (one-way) or twice (two-way clustering).");
  const response = parseFormula(opts.model[0], { intercept: opts.intercept }).response;
  const zeroModel = formulaText(response, zeroTerms);
  const loaded = await loadDesigns(
    file,
    opts,
    anyZero ? [...opts.model, zeroModel] : opts.model,
    opts.cluster.map((column) => ({ column, option: "--cluster" })),
    anyZero ? null : "count",
  );
  const { control, labels } = loaded;
  const designs = anyZero ? loaded.designs.slice(0, -1) : loaded.designs;
  const zero = anyZero ? { design: loaded.designs[loaded.designs.length - 1], terms: zeroTerms } : undefined;
  const responses = [...new Set(designs.map((d) => d.model.response))];
  if (responses.length > 1)
    throw new InputError(
      `compare needs the same count column in every model (got ${responses.map((r) => `'${r}'`).join(" and ")}); models of different counts cannot be compared by their likelihoods.`,
    );
  const clusters = opts.cluster.map((c) => clusteringOf(c, labels.get(c)!));
  const result = analyzeCompare(designs, families, control, merge, clusters, zero);
  const content =
    opts.format === "json"
      ? renderJson(result)
      : opts.format === "markdown" || opts.format === "html"
        ? comparePage(result, opts.format)
        : renderCompareText(displaySafe(result), textLayout(opts));
  await finish(outputs, opts, content);
  return EXIT.ok;
}
