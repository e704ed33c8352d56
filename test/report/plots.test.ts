// Pictures: SVG structure, PNG content, rootogram totals and quantile residuals.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, readFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { DOMParser } from "@xmldom/xmldom";
import { PNG } from "pngjs";
import { buildDesign } from "../../src/design/design.js";
import { parseTable } from "../../src/io/csv.js";
import { parseFormula } from "../../src/formula/formula.js";
import { analyzeFit, diagnosticsOf } from "../../src/analysis/fit.js";
import { normalUpperTail } from "../../src/math/distributions.js";
import { renderSvg } from "../../src/report/svg.js";
import { textRootogram } from "../../src/report/text-rootogram.js";
import { negbinDraw, rng, runCli } from "../helpers.js";

const SMALL = "g,x,e,y\na,0.1,2,3\nb,0.5,2,0\na,0.9,1,5\nb,0.3,3,2\na,0.7,2,1\nb,0.2,1,4\na,0.4,2,2\nb,0.8,3,6\n";

function analysis(csv: string, family: "poisson" | "negbin" = "poisson") {
  const design = buildDesign(parseTable(csv, { source: "t.csv" }), parseFormula("y ~ g + x"), { exposure: "e" });
  const { countFit, summary } = analyzeFit(design, { family, level: 0.95, intervals: "both" });
  return { design, countFit, summary, diag: diagnosticsOf(design, countFit, 3) };
}

test("the SVG parses as XML and holds one mark per count value, per row and per rate ratio", () => {
  const { summary, diag } = analysis(SMALL);
  const svg = renderSvg({
    title: "small <test> & check",
    rootogram: diag.rootogram,
    fitted: diag.fitted,
    residuals: diag.residuals,
    summary,
  });
  const errors: string[] = [];
  const doc = new DOMParser({
    onError: (level: string, msg: string) => {
      if (level !== "warning") errors.push(msg);
    },
  }).parseFromString(svg, "image/svg+xml");
  assert.deepEqual(errors, []);
  const count = (tag: string, cls: string) =>
    Array.from(doc.getElementsByTagName(tag)).filter((e) => e.getAttribute("class") === cls).length;
  assert.equal(count("rect", "bar"), 7, "counts 0..6");
  assert.equal(count("circle", "pt"), 8, "one residual per row");
  assert.equal(count("circle", "qq"), 8);
  assert.equal(count("line", "ci"), 2, "g=b and x");
  assert.equal(count("rect", "est"), 2);
  assert.equal(count("polyline", "curve"), 1);
});

test("the rootogram's expected frequencies (tail included) sum to the number of rows", () => {
  for (const family of ["poisson", "negbin"] as const) {
    const u = rng(8);
    let csv = "g,x,e,y\n";
    for (let i = 0; i < 300; i++)
      csv += `${i % 2 ? "a" : "b"},${u()},${1 + u()},${negbinDraw(u, 6 * (1 + u()), 0.4)}\n`;
    const { diag } = analysis(csv, family);
    const r = diag.rootogram;
    const total = r.expected.reduce((a, b) => a + b, 0) + r.tailExpected;
    assert.ok(Math.abs(total - 300) < 1e-8, `${family}: ${total}`);
    assert.equal(r.observed.reduce((a, b) => a + b, 0) + r.tailObserved, 300);
  }
});

/** Kolmogorov–Smirnov test against the standard normal, with Stephens' (1970) small-sample adjustment of the asymptotic p-value. */
function ksNormal(x: Float64Array): number {
  const s = [...x].sort((a, b) => a - b);
  const n = s.length;
  let d = 0;
  s.forEach((v, i) => {
    const F = 1 - normalUpperTail(v);
    d = Math.max(d, Math.abs(F - i / n), Math.abs((i + 1) / n - F));
  });
  const lam = (Math.sqrt(n) + 0.12 + 0.11 / Math.sqrt(n)) * d;
  let p = 0;
  for (let k = 1; k < 100; k++) p += 2 * (k % 2 ? 1 : -1) * Math.exp(-2 * k * k * lam * lam);
  return Math.min(1, Math.max(0, p));
}

test("randomized quantile residuals of data simulated from the fitted model are standard normal (KS p > 0.01, seeded)", () => {
  for (const [family, alpha] of [
    ["poisson", 0],
    ["negbin", 0.5],
  ] as const) {
    const u = rng(alpha ? 10 : 9);
    let csv = "g,x,e,y\n";
    for (let i = 0; i < 800; i++) {
      const x = u();
      const e = 1 + 2 * u();
      csv += `${i % 3},${x},${e},${negbinDraw(u, e * 3 * Math.exp(0.2 * (i % 3) + 0.5 * x), alpha)}\n`;
    }
    const { diag } = analysis(csv.replace(/^(\d),/gm, "g$1,"), family);
    const p = ksNormal(diag.residuals);
    assert.ok(p > 0.01, `${family}: KS p = ${p}`);
  }
  // And the test can fail: Poisson residuals of strongly overdispersed data are not standard normal.
  const u = rng(11);
  let csv = "g,x,e,y\n";
  for (let i = 0; i < 800; i++) csv += `g${i % 3},${u()},2,${negbinDraw(u, 6, 1.5)}\n`;
  assert.ok(ksNormal(analysis(csv, "poisson").diag.residuals) < 0.01);
});

test("--plot writes a PNG that decodes and is not blank, and an SVG; a text rootogram fits the terminal width", () => {
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-"));
  const png = join(dir, "d.png");
  const r = runCli([
    "fit",
    "examples/ward_falls.csv",
    "--model",
    "falls ~ ward + staffing_ratio",
    "--ref",
    "ward=surgery",
    "--exposure",
    "bed_days",
    "--plot",
    png,
    "--quiet",
    "--intervals",
    "wald",
  ]);
  assert.equal(r.code, 0, r.stderr);
  const img = PNG.sync.read(readFileSync(png));
  // Rate ratios across the top (a line per row), the three checks beneath.
  assert.ok(img.width === 1300 && img.height >= 720, `${img.width} × ${img.height}`);
  let sum = 0,
    sum2 = 0;
  const n = img.width * img.height;
  for (let i = 0; i < n; i++) {
    const g = (img.data[4 * i] + img.data[4 * i + 1] + img.data[4 * i + 2]) / 3;
    sum += g;
    sum2 += g * g;
  }
  const variance = sum2 / n - (sum / n) ** 2;
  assert.ok(variance > 100, `pixel variance ${variance}`);
  const svgPath = join(dir, "d.svg");
  assert.equal(
    runCli([
      "check",
      "examples/ward_falls.csv",
      "--model",
      "falls ~ ward",
      "--ref",
      "ward=surgery",
      "--exposure",
      "bed_days",
      "--plot",
      svgPath,
      "--quiet",
    ]).code,
    0,
  );
  assert.match(readFileSync(svgPath, "utf8"), /^<\?xml[\s\S]*<svg[\s\S]*Count frequencies, √ scale[\s\S]*<\/svg>\n$/);
  assert.equal(
    runCli(["fit", "examples/ward_falls.csv", "--model", "falls ~ ward", "--plot", join(dir, "d.gif")]).code,
    2,
  );
  const { diag } = analysis(SMALL);
  const lines = textRootogram(diag.rootogram, 70);
  assert.ok(
    lines.every((l) => [...l].length <= 70),
    "fits 70 columns",
  );
  assert.equal(lines.length, 1 + 7);
});
