// Outputs of `tallyfit predict`: the input rows plus the new columns (CSV), or a table.
import type { GroupSummary } from "../infer/groups.js";
import type { PredictResult } from "../infer/predict.js";
import { csvField } from "./csv-field.js";
import { fixed, groupRows, sig } from "./format.js";
import { type ReportSink, TextSink } from "./sink.js";
import type { Style } from "./style.js";

export const PREDICT_COLUMNS = [
  "expected",
  "expected_low",
  "expected_high",
  "predicted_low",
  "predicted_high",
  "upper_tail_p",
  "flagged",
  "prediction_note",
];

export function renderPredictCsv(records: string[][], r: PredictResult): string {
  const [header, ...rows] = records;
  const lines = [[...header, ...PREDICT_COLUMNS].map(csvField).join(",")];
  const byRow = new Map(r.rows.map((x) => [x.row, x]));
  const skipped = new Map((r.skipped ?? []).map((s) => [s.row, s.reason]));
  rows.forEach((rec, k) => {
    const p = byRow.get(k + 2);
    if (!p) {
      // A row skipped by --skip-bad-rows keeps its place, with no prediction and the reason.
      const why = skipped.get(k + 2);
      if (why !== undefined)
        lines.push([...rec, "", "", "", "", "", "", "", `skipped: ${why}`].map(csvField).join(","));
      return;
    }
    lines.push(
      [
        ...rec,
        p.expected,
        p.mean_ci[0],
        p.mean_ci[1],
        p.prediction_interval[0],
        p.prediction_interval[1],
        p.upper_tail_p,
        p.flagged,
        p.note,
      ]
        .map(csvField)
        .join(","),
    );
  });
  return `${lines.join("\n")}\n`;
}

export const FLAG_CAUTION =
  "A flag is a signal for follow-up, not a finding: counts beyond a limit happen by chance about as often as the flag level allows, " +
  "and local surveillance protocols and qualified review decide what is done.";

export function renderPredictText(
  r: PredictResult,
  groups: GroupSummary | undefined,
  o: { style: Style; width: number; labels?: string[]; labelHeading?: string },
): string {
  const k = new TextSink(o.style, o.width);
  writePredict(r, groups, k, o);
  return k.done();
}

/** The predict report, written to any sink; `picture` is the group flags' picture (HTML). */
export function writePredict(
  r: PredictResult,
  groups: GroupSummary | undefined,
  k: ReportSink,
  o: { labels?: string[]; labelHeading?: string; picture?: { svg: string; title: string; description: string } },
): void {
  const st = k.style;
  const lv = `${+(r.level * 100).toFixed(2)}%`;
  k.heading(`Expected counts under ${r.family} model ${r.model}`);
  k.blank();
  const rows: string[][] = [
    [
      "row",
      o.labelHeading ?? "",
      "expected",
      `mean ${lv}`,
      `new count ${lv}`,
      "observed",
      "P(Y ≥ obs)",
      `limit at ${r.flag_level}`,
      "flag",
    ],
  ];
  for (const [k, p] of r.rows.entries())
    rows.push([
      String(p.row),
      o.labels?.[k] ?? "",
      fixed(p.expected, 2),
      `${sig(p.mean_ci[0])} – ${sig(p.mean_ci[1])}`,
      `${p.prediction_interval[0]} – ${p.prediction_interval[1]}`,
      p.observed === null ? "–" : String(p.observed),
      p.upper_tail_p === null ? "–" : sig(p.upper_tail_p, 3),
      String(p.flag_limit),
      p.flagged ? st.caution("FLAG") : "",
    ]);
  k.table(rows, ["r", "l", "r", "r", "r", "r", "r", "r", "l"]);
  const notes = [...new Set(r.rows.flatMap((p) => (p.note ? [p.note] : [])))];
  for (const n of notes) {
    const which = r.rows.filter((p) => p.note === n).map((p) => p.row);
    k.para(`Rows ${which.join(", ")}: ${n}.`);
  }
  k.blank();
  if (groups) {
    k.heading(`Observed and expected by ${groups.column} (O/E limits: ${groups.method})`);
    k.table(...groupRows(groups));
    k.blank();
  }
  if (r.groups && r.flag_by) {
    k.heading(`Totals by ${r.flag_by.join(" · ")}`);
    const adjusted = r.adjustment !== "none";
    const grows: string[][] = [
      [
        r.flag_by.join(" · "),
        "rows",
        "expected",
        `new total ${lv}`,
        "observed",
        "P(T ≥ obs)",
        ...(adjusted ? ["adjusted p"] : []),
        `limit at ${r.flag_level}`,
        "flag",
      ],
    ];
    for (const g of r.groups)
      grows.push([
        g.group,
        String(g.rows),
        fixed(g.expected, 1),
        `${g.prediction_interval[0]} – ${g.prediction_interval[1]}`,
        g.observed === null ? "–" : String(g.observed),
        g.upper_tail_p === null ? "–" : sig(g.upper_tail_p, 3),
        ...(adjusted ? [g.adjusted_p == null ? "–" : sig(g.adjusted_p, 3)] : []),
        String(g.flag_limit),
        g.flagged ? st.caution("FLAG") : "",
      ]);
    k.table(grows, ["l", "r", "r", "r", "r", "r", ...(adjusted ? ["r" as const] : []), "r", "l"]);
    k.para(`Method: ${r.group_method}.`);
    if (o.picture) k.picture(o.picture.svg, o.picture.title, o.picture.description);
    k.blank();
  }
  k.para(`${r.n_flagged} of ${r.rows.length} rows flagged. Method: ${r.method}.`, 0, 0);
  k.para(chanceLine(r), 0, 0);
  if (r.warnings.length) {
    k.blank();
    k.heading("Warnings", "caution");
    k.numbered(r.warnings);
    k.blank();
  }
  k.caution(FLAG_CAUTION);
}

/** How many flags chance alone would give, beside the flags found. */
function chanceLine(r: PredictResult): string {
  const level = +(1 - r.flag_level).toPrecision(6);
  const groups = r.groups ? `; groups: ${r.n_groups_flagged ?? 0} of ${r.groups.length} flagged` : "";
  if (r.adjustment === "holm")
    return `Flags follow Holm-adjusted p-values: when the model holds, the chance of any false flag is at most ${level} among the ${r.rows.length} rows${r.groups ? ` and, separately, among the ${r.groups.length} groups` : ""}${groups}.`;
  if (r.adjustment === "bh")
    return `Flags follow Benjamini–Hochberg-adjusted p-values: on average at most a share ${level} of the flags are false${groups}.`;
  const g =
    r.chance_flags.groups === null
      ? ""
      : `; groups: ${r.n_groups_flagged ?? 0} of ${r.groups!.length} flagged, ${fixed(r.chance_flags.groups, 2)} expected by chance`;
  return `Without adjustment, chance alone flags about ${fixed(r.chance_flags.rows, 2)} of the ${r.rows.length} rows when the model holds${g} (--adjust holm or bh allows for the number tested).`;
}
