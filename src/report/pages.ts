// The reports as documents to forward: one self-contained HTML page or
// Markdown, each carrying everything the text report says, in its order.
import type { CheckResult } from "../infer/check.js";
import type { CompareResult } from "../infer/compare.js";
import type { GroupSummary } from "../infer/groups.js";
import type { PredictResult } from "../infer/predict.js";
import type { FitSummary } from "../infer/summary.js";
import { writeCheck } from "./check-text.js";
import { writeCompare } from "./compare-text.js";
import { writeFit } from "./fit-text.js";
import { renderGroupFlagsSvg } from "./flag-svg.js";
import { HtmlSink } from "./html-sink.js";
import { MarkdownSink } from "./markdown-sink.js";
import { writePredict } from "./predict.js";
import type { ReportSink } from "./sink.js";
import { writeZeroFit } from "./zero-text.js";

export type PageFormat = "html" | "markdown";

/** A picture for a page: the SVG (inline in HTML) and, for Markdown, the file written beside it. */
export interface PagePicture {
  svg: string;
  file?: string;
}

function sinkFor(format: PageFormat): ReportSink {
  return format === "html" ? new HtmlSink() : new MarkdownSink();
}

export function fitPage(
  s: FitSummary,
  format: PageFormat,
  o: { intervals: "wald" | "profile" | "both"; picture?: PagePicture },
): string {
  const k = sinkFor(format);
  if (s.zero_part) writeZeroFit(s, k);
  else writeFit(s, k, o);
  return k.done();
}

export function checkPage(r: CheckResult, format: PageFormat, picture?: PagePicture): string {
  const k = sinkFor(format);
  writeCheck(r, k, picture);
  return k.done();
}

export function comparePage(r: CompareResult, format: PageFormat): string {
  const k = sinkFor(format);
  writeCompare(r, k);
  return k.done();
}

export function predictPage(
  r: PredictResult,
  groups: GroupSummary | undefined,
  format: PageFormat,
  o: { labels?: string[]; labelHeading?: string },
): string {
  const k = sinkFor(format);
  const title = `Group totals against their predictive distribution under the ${r.family} model`;
  const svg = format === "html" ? renderGroupFlagsSvg(r, title) : null;
  writePredict(r, groups, k, {
    ...o,
    picture: svg
      ? {
          svg,
          title,
          description:
            "For each group, the prediction interval of its total as a band, the expected total as a tick, the flag limit as a dashed mark and the observed total as a dot, filled and labelled when flagged.",
        }
      : undefined,
  });
  return k.done();
}
