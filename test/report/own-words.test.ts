// Our own words: labels that readers associate with the output of existing
// statistics programs (a list recalled from memory, kept here so that it
// stays empty) must not appear in the source, the README or a fresh report in
// any format. The capability stays; the wording and layout are tallyfit's.
import { test } from "node:test";
import assert from "node:assert/strict";
import { readdirSync, readFileSync, statSync } from "node:fs";
import { join } from "node:path";
import { ROOT, runCli } from "../helpers.js";

/** Recalled from memory: labels and layouts of other programs' count-model output. */
export const RECALLED_LABELS: RegExp[] = [
  /\bstd\. ?err/i,
  /\bstd err\b/i,
  /pr\(>\|[zt]\|\)/i,
  /p>\|[zt]\|/i,
  /signif\. codes/i,
  /null deviance/i,
  /residual deviance/i,
  /intercept-only deviance\s+[\d,.]+\s+on/i,
  /on [\d,]+ residual df/i,
  /number of fisher scoring/i,
  /dispersion parameter for/i,
  /lr test of alpha/i,
  /chibar2/i,
  /wald on log alpha/i,
  /theta = 1\/alpha/i,
  /\b1\/alpha \(nb size\)/i,
  /\bcoef\.\s/i,
  /conf\. interval/i,
  /log likelihood =/i,
  /pseudo r2/i,
  /\bIRR\b/,
  /\blnalpha\b/i,
  /prob > chi2/i,
  /\bLR chi2\b/i,
  /residuals vs\.? fitted/i,
  /normal q-q/i,
  /scale-location/i,
  /residuals vs\.? leverage/i,
  /<[12]e-16/,
  /deviance residuals/i,
  /no\. observations/i,
  /df residuals/i,
  /number of obs\b/i,
  /pearson chi2\b/i,
];

function filesUnder(dir: string): string[] {
  return readdirSync(dir).flatMap((name) => {
    const p = join(dir, name);
    return statSync(p).isDirectory() ? filesUnder(p) : [p];
  });
}

function findings(where: string, text: string): string[] {
  return RECALLED_LABELS.flatMap((re) => {
    const m = re.exec(text);
    return m ? [`${where}: '${m[0]}' (${re})`] : [];
  });
}

test("the guard finds what it looks for (each label matches a sample of it)", () => {
  const samples = [
    "Std. Error",
    "intercept-only deviance  3,146.65  on 1,705 df",
    "Pr(>|z|)",
    "Null deviance: 12",
    "LR test of alpha=0",
    "<2e-16",
    "Normal Q-Q",
    "IRR",
  ];
  for (const s of samples) assert.ok(findings("sample", s).length > 0, s);
  assert.deepEqual(
    findings("sample", "rate ratio, standard error, Pearson chi-square, irregular, stderr, alphaStdError"),
    [],
  );
});

test("no label recalled from other programs in src/, the README or a fresh report (text, Markdown, HTML, JSON)", () => {
  const found: string[] = [];
  for (const f of filesUnder(join(ROOT, "src"))) found.push(...findings(f, readFileSync(f, "utf8")));
  found.push(...findings("README.md", readFileSync(join(ROOT, "README.md"), "utf8")));
  const clinic = ["examples/clinic_visits.csv", "--exposure", "open_hours"];
  const model = ["--model", "visits ~ clinic + weekday + staff_on_duty + flu_season"];
  const runs: [string, string[]][] = [];
  for (const format of ["text", "markdown", "html", "json"]) {
    runs.push([`fit negbin ${format}`, ["fit", ...clinic, ...model, "--family", "negbin", "--format", format]]);
    runs.push([`fit poisson ${format}`, ["fit", ...clinic, ...model, "--format", format]]);
    runs.push([`check ${format}`, ["check", ...clinic, ...model, "--family", "negbin", "--format", format]]);
    runs.push([
      `zinb ${format}`,
      [
        "fit",
        "examples/ward_reports.csv",
        "--model",
        "falls ~ ward_type",
        "--exposure",
        "bed_days",
        "--family",
        "zinb",
        "--zero-terms",
        "small_unit",
        "--format",
        format,
      ],
    ]);
  }
  for (const [name, args] of runs) {
    const r = runCli([...args, "--quiet"]);
    assert.ok(r.code === 0 || r.code === 4, `${name}: ${r.stderr}`);
    found.push(...findings(name, r.stdout));
  }
  assert.deepEqual(found, []);
});
