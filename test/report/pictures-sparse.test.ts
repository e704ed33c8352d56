// Pictures that show all the data: the rootogram bins large counts instead of
// stopping at 100; the forest panel grows with its terms, marks reference
// levels and draws a level with no events as open toward 0; the SVG has a
// title and a description.
import { test } from "node:test";
import assert from "node:assert/strict";
import { DOMParser } from "@xmldom/xmldom";
import { analyzeFit, diagnosticsOf } from "../../src/analysis/fit.js";
import { buildDesign } from "../../src/design/design.js";
import { parseFormula } from "../../src/formula/formula.js";
import { parseTable } from "../../src/io/csv.js";
import { renderSvg } from "../../src/report/svg.js";
import { textRootogram } from "../../src/report/text-rootogram.js";
import { negbinDraw, rng } from "../helpers.js";

/** Weekly totals from 40 clinics (counts about 50 to 400), one of them with no events at all. */
function weekly() {
  const u = rng(21);
  let csv = "clinic,week,hours,visits\n";
  for (let c = 0; c < 40; c++)
    for (let w = 0; w < 8; w++)
      csv += `c${String(c).padStart(2, "0")},${w},40,${c === 7 ? 0 : negbinDraw(u, 50 + 9 * c, 0.02)}\n`;
  const design = buildDesign(parseTable(csv, { source: "weekly.csv" }), parseFormula("visits ~ clinic"), {
    exposure: "hours",
  });
  const { countFit, summary } = analyzeFit(design, { family: "poisson", level: 0.95, intervals: "both" });
  return { design, summary, diag: diagnosticsOf(design, countFit) };
}

test("the rootogram bins counts up to the largest one: no row falls outside the picture", () => {
  const { design, diag } = weekly();
  const r = diag.rootogram;
  const top = Math.max(...design.y);
  assert.ok(top > 300, `counts reach ${top}`);
  assert.ok(r.binWidth > 1 && r.counts.length <= 60);
  assert.ok(r.counts[r.counts.length - 1] + r.binWidth > top, "the last bin holds the largest count");
  assert.equal(r.tailObserved, 0);
  assert.equal(
    r.observed.reduce((a, b) => a + b, 0),
    design.n,
  );
  assert.ok(Math.abs(r.expected.reduce((a, b) => a + b, 0) + r.tailExpected - design.n) < 1e-6);
  const lines = textRootogram(r, 80);
  assert.match(lines[lines.length - 1], new RegExp(`\\d+–${r.counts[r.counts.length - 1] + r.binWidth - 1} `));
});

test("the forest panel grows with 40 terms, marks the reference level and draws the no-events level as open", () => {
  const { summary, diag } = weekly();
  const svg = renderSvg({
    title: "weekly",
    rootogram: diag.rootogram,
    fitted: diag.fitted,
    residuals: diag.residuals,
    summary,
  });
  const doc = new DOMParser().parseFromString(svg, "image/svg+xml");
  const root = doc.documentElement!;
  assert.ok(Number(root.getAttribute("height")) > 1100, "taller than the 880-pixel page of a small model");
  assert.equal(doc.getElementsByTagName("title")[0].textContent, "weekly");
  assert.match(doc.getElementsByTagName("desc")[0].textContent ?? "", /hanging rootogram/);
  const byClass = (tag: string, cls: string) =>
    Array.from(doc.getElementsByTagName(tag)).filter((e) => e.getAttribute("class") === cls);
  assert.equal(byClass("rect", "ref").length, 1, "one reference level");
  assert.equal(byClass("line", "ci").length, 39, "every other level has an interval");
  assert.equal(byClass("rect", "est").length, 38, "no point estimate for the level with no events");
  const texts = Array.from(doc.getElementsByTagName("text")).map((t) => t.textContent ?? "");
  assert.ok(texts.some((t) => /clinic=c00 \(reference\)/.test(t)));
  assert.ok(texts.includes("no events: open toward 0"));
  const dashed = byClass("line", "ci").filter((l) => l.getAttribute("stroke-dasharray"));
  assert.equal(dashed.length, 1, "the open interval is dashed");
  const x1 = Number(dashed[0].getAttribute("x1")),
    x2 = Number(dashed[0].getAttribute("x2"));
  assert.ok(x2 - x1 > 40, `the open interval is drawn long (${x2 - x1} px), not as a stub`);
});
