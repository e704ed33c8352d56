// --format html and markdown: one self-contained page with everything the
// text report says, read back as Chromium parses it (headless Chromium,
// Debian's chromium package): the coefficients against the JSON, the
// verdict, the inline pictures, a screenshot that is not blank, no network
// request, and hostile names from the data escaped in HTML and Markdown.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { dumpDom, pageRequests, pngPixels, screenshot } from "../chromium.js";
import { ROOT, runCli } from "../helpers.js";

const EX = join(ROOT, "examples");
const MODEL = ["--model", "visits ~ clinic + weekday + staff_on_duty + flu_season", "--exposure", "open_hours"];
const FIT = ["fit", join(EX, "clinic_visits.csv"), ...MODEL, "--family", "negbin", "--quiet"];
const dir = mkdtempSync(join(tmpdir(), "tallyfit-pages-"));

function page(args: string[], name: string): string {
  const file = join(dir, name);
  const r = runCli([...args, "--format", "html", "--output", file]);
  assert.ok(r.code === 0 || r.code === 4, r.stderr);
  return file;
}

/** The text of an element's inner HTML with tags removed and entities read. */
function text(html: string): string {
  return html
    .replace(/<[^>]*>/g, "")
    .replace(/&lt;/g, "<")
    .replace(/&gt;/g, ">")
    .replace(/&quot;/g, '"')
    .replace(/&#39;/g, "'")
    .replace(/&amp;/g, "&");
}

test("fit --format html: every coefficient's term and rate ratio as in the JSON, the dispersion reading, an inline SVG with its title; the screenshot is not blank", () => {
  const file = page(FIT, "fit.html");
  const json = JSON.parse(runCli([...FIT, "--format", "json"]).stdout);
  const dom = dumpDom(file);
  // The first table with a row per term is the rate ratios' (the log-scale coefficients come later).
  const rows = new Map<string, string>();
  for (const m of dom.matchAll(/<tr><th scope="row"[^>]*>([^<]*)<\/th><td class="num">([^<]*)<\/td>/g))
    if (!rows.has(text(m[1]))) rows.set(text(m[1]), m[2]);
  for (const c of json.coefficients.filter((x: { kind: string }) => x.kind !== "intercept")) {
    assert.ok(rows.has(c.term), `row for ${c.term}`);
    const shown = Number(rows.get(c.term));
    assert.ok(Math.abs(shown / c.rate_ratio - 1) < 5e-4, `${c.term}: ${shown} against ${c.rate_ratio}`);
  }
  assert.match(dom, /<h1>Negative-binomial \(NB2\) rate model for visits/);
  assert.match(text(dom), /The NB2 variance μ \+ α·μ² allows for extra variation/);
  assert.match(
    dom,
    /<svg [^>]*role="img" aria-labelledby="fig1-title fig1-desc"><title id="fig1-title">Diagnostic pictures/,
  );
  assert.match(text(dom), /Reading these results: Rate ratios from routinely collected counts describe associations/);
  // The header cells name their scope, and the intervals read "low – high".
  assert.match(dom, /<th scope="col" class="num">Wald 95%<\/th>/);
  assert.match(dom, /<td class="num">0\.8501 – 0\.9377<\/td>/);
  const png = join(dir, "fit.png");
  screenshot(file, png);
  const { width, height, rgb } = pngPixels(png);
  let ink = 0;
  const colours = new Set<number>();
  for (let i = 0; i < width * height; i++) {
    const [r, g, b] = [rgb[i * 3], rgb[i * 3 + 1], rgb[i * 3 + 2]];
    if (r + g + b < 600) ink++;
    colours.add((r << 16) | (g << 8) | b);
  }
  assert.ok(ink > 0.01 * width * height, `ink on ${ink} of ${width * height} pixels`);
  assert.ok(colours.size > 20, `${colours.size} colours`);
});

test("check, compare and predict --format html: the verdict, the comparison and the group flags with their picture", () => {
  const check = dumpDom(page(["check", join(EX, "clinic_visits.csv"), ...MODEL, "--quiet"], "check.html"));
  const json = JSON.parse(
    runCli(["check", join(EX, "clinic_visits.csv"), ...MODEL, "--format", "json", "--quiet"]).stdout,
  );
  assert.ok(text(check).includes(json.check.verdict.text), "the verdict's words");
  assert.match(check, /<strong class="caution">FLAG<\/strong>/, "a flag is a word, not only a colour");
  assert.match(check, /<svg [^>]*role="img"/);
  const compare = dumpDom(
    page(
      [
        "compare",
        join(EX, "clinic_visits.csv"),
        "--model",
        "visits ~ clinic",
        "--model",
        "visits ~ clinic + weekday",
        "--exposure",
        "open_hours",
        "--quiet",
      ],
      "compare.html",
    ),
  );
  assert.match(compare, /<h1>Model comparison on the same rows<\/h1>/);
  assert.match(compare, /<tr><th scope="row">1 ⊂ 2<\/th><td>LR chi-square<\/td>/);
  const model = join(dir, "m.json");
  assert.equal(runCli([...FIT, "--save-model", model]).code, 0);
  const predict = dumpDom(
    page(
      [
        "predict",
        "--model-file",
        model,
        join(EX, "clinic_visits_week49.csv"),
        "--flag-by",
        "clinic",
        "--draws",
        "200",
        "--quiet",
      ],
      "predict.html",
    ),
  );
  assert.match(predict, /<h2>Totals by clinic<\/h2>/);
  assert.match(predict, /<title id="fig1-title">Group totals against their predictive distribution/);
  assert.match(text(predict), /A flag is a signal for follow-up, not a finding/);
});

test("the pages make no network request: no external src, href, url() or import, and Chromium's net log shows none (while it does for a page that asks)", () => {
  const files = ["fit.html", "check.html", "compare.html", "predict.html"].map((f) => join(dir, f));
  const fit = page(FIT, "fit.html");
  for (const f of files) {
    const html = readFileSync(f, "utf8");
    assert.doesNotMatch(html, /\s(src|href|xlink:href)\s*=|url\(|@import|<script|<link|<iframe|<object/i, f);
  }
  assert.deepEqual(pageRequests(fit), []);
  // The same log on a page that does ask for resources: the check sees them.
  const control = join(dir, "control.html");
  writeFileSync(control, '<!DOCTYPE html><body><img src="http://127.0.0.1:9/x.png" alt="x"></body>');
  assert.deepEqual(pageRequests(control), ["http://127.0.0.1:9/x.png"]);
});

test("hostile names from the data are escaped: in the HTML page's DOM they stay text, in Markdown they stay cells", () => {
  const hostile = ["<script>alert(1)</script>", '"onload=alert(2) x="', "a|b", "`tick`"];
  let csv = "unit,e,y\n";
  for (let i = 0; i < 48; i++) {
    const level = hostile[i % hostile.length];
    csv += `"${level.replace(/"/g, '""')}",${1 + (i % 3)},${2 + (i % 5)}\n`;
  }
  const data = join(dir, "hostile<b>.csv");
  writeFileSync(data, csv);
  const args = ["fit", data, "--model", "y ~ unit", "--exposure", "e", "--quiet"];
  const dom = dumpDom(page(args, "hostile.html"));
  assert.doesNotMatch(dom, /<script/i, "no script element");
  assert.doesNotMatch(dom, /<b>/, "the file name's tag stays text");
  assert.doesNotMatch(dom, /\sonload=/i, "no onload attribute");
  const body = text(dom);
  for (const h of hostile) assert.ok(body.includes(`unit=${h}`) || body.includes(h), `${h} shown as text`);
  assert.ok(body.includes("hostile<b>.csv"));
  const md = runCli([...args, "--format", "markdown"]).stdout;
  assert.match(md, /\| unit=a\\\|b \|/);
  assert.match(md, /\| unit=\\`tick\\` \|/);
  assert.match(md, /\| unit=\\<script\\>alert\(1\)\\<\/script\\> \|/);
  assert.doesNotMatch(md, /<script>/);
});
