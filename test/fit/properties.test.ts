// Properties of the Poisson likelihood that hold exactly (closed forms and invariances).
import { test } from "node:test";
import assert from "node:assert/strict";
import { assertRel, fitCsv, poissonDraw, rng } from "../helpers.js";

function oneFactorData(seed: number, n = 60) {
  const u = rng(seed);
  const levels = ["east", "north", "south", "west10", "west9"];
  let csv = "site,exposure,x,y\n";
  const rows: { site: string; e: number; x: number; y: number }[] = [];
  for (let i = 0; i < n; i++) {
    const site = levels[i % levels.length];
    const e = 0.5 + 4 * u();
    const x = 10 * u();
    const y = poissonDraw(u, e * (1 + levels.indexOf(site)) * Math.exp(0.05 * x));
    rows.push({ site, e, x, y });
    csv += `${site},${e},${x},${y}\n`;
  }
  return { csv, rows, levels };
}

test("closed form: one factor with exposure, fitted rate = Σcount/Σexposure per level, rate ratios their ratios (1e-10)", () => {
  const { csv, rows } = oneFactorData(11);
  const { summary, coef, design } = fitCsv(csv, "y ~ site", { exposure: "exposure" });
  const rate = (s: string) => {
    const r = rows.filter((x) => x.site === s);
    return r.reduce((a, b) => a + b.y, 0) / r.reduce((a, b) => a + b.e, 0);
  };
  // Natural order: east, north, south, west9, west10 ("west9" < "west10").
  assert.deepEqual(design.factors[0].levels, ["east", "north", "south", "west9", "west10"]);
  assertRel(summary.baseline!.rate, rate("east"), 1e-10, "baseline rate");
  for (const s of ["north", "south", "west9", "west10"])
    assertRel(coef(`site=${s}`).rate_ratio!, rate(s) / rate("east"), 1e-10, s);
});

test("closed form: a saturated model has deviance 0", () => {
  const { csv } = oneFactorData(3, 5);
  const { summary } = fitCsv(csv, "y ~ site", { exposure: "exposure" });
  assert.equal(summary.df_residual, 0);
  assert.ok(Math.abs(summary.deviance!) < 1e-9, `deviance ${summary.deviance}`);
});

test("invariance: multiplying the exposure by c shifts only the intercept, by log c", () => {
  const { csv, rows } = oneFactorData(5);
  const c = 1000;
  const scaled = `site,exposure,x,y\n${rows.map((r) => `${r.site},${r.e * c},${r.x},${r.y}`).join("\n")}\n`;
  const a = fitCsv(csv, "y ~ site + x", { exposure: "exposure" }).summary;
  const b = fitCsv(scaled, "y ~ site + x", { exposure: "exposure" }).summary;
  a.coefficients.forEach((ca, k) => {
    const cb = b.coefficients[k];
    if (ca.term === "intercept") assertRel(cb.estimate!, ca.estimate! - Math.log(c), 1e-9, "intercept");
    else assertRel(cb.estimate!, ca.estimate!, 1e-9, ca.term);
    assertRel(cb.std_error!, ca.std_error!, 1e-8, `${ca.term} se`);
  });
  assertRel(b.deviance!, a.deviance!, 1e-9, "deviance");
});

test("invariance: permuting rows changes nothing", () => {
  const { rows } = oneFactorData(8);
  const toCsv = (rs: typeof rows) =>
    `site,exposure,x,y\n${rs.map((r) => `${r.site},${r.e},${r.x},${r.y}`).join("\n")}\n`;
  const u = rng(99);
  const shuffled = [...rows];
  for (let i = shuffled.length - 1; i > 0; i--) {
    const j = Math.floor(u() * (i + 1));
    [shuffled[i], shuffled[j]] = [shuffled[j], shuffled[i]];
  }
  const a = fitCsv(toCsv(rows), "y ~ site * x", { exposure: "exposure" }).summary;
  const b = fitCsv(toCsv(shuffled), "y ~ site * x", { exposure: "exposure" }).summary;
  a.coefficients.forEach((ca, k) => assertRel(b.coefficients[k].estimate!, ca.estimate!, 1e-9, ca.term));
  assertRel(b.deviance!, a.deviance!, 1e-10, "deviance");
});

test("invariance: scaling a numeric predictor by c divides its coefficient by c", () => {
  const { rows } = oneFactorData(21);
  const c = 60;
  const csv1 = `site,exposure,x,y\n${rows.map((r) => `${r.site},${r.e},${r.x},${r.y}`).join("\n")}\n`;
  const csv2 = `site,exposure,x,y\n${rows.map((r) => `${r.site},${r.e},${r.x * c},${r.y}`).join("\n")}\n`;
  const a = fitCsv(csv1, "y ~ site + x", { exposure: "exposure" });
  const b = fitCsv(csv2, "y ~ site + x", { exposure: "exposure" });
  assertRel(b.coef("x").estimate!, a.coef("x").estimate! / c, 1e-9, "x");
  assertRel(b.coef("x").std_error!, a.coef("x").std_error! / c, 1e-8, "x se");
  assertRel(b.coef("intercept").estimate!, a.coef("intercept").estimate!, 1e-9, "intercept");
});

test("numeric:numeric is a product and factor:numeric without its main effect gives a slope per level", () => {
  const { csv } = oneFactorData(4, 80);
  const { summary } = fitCsv(csv, "y ~ site + site:x", { exposure: "exposure" });
  const slopes = summary.coefficients.filter((c) => c.kind === "slope").map((c) => c.term);
  assert.deepEqual(slopes, ["site=east:x", "site=north:x", "site=south:x", "site=west9:x", "site=west10:x"]);
  const prod = fitCsv(csv, "y ~ x:exposure").summary;
  assert.deepEqual(
    prod.coefficients.map((c) => c.term),
    ["intercept", "x:exposure"],
  );
});

test("a factor level with no events is reported as not estimable, with a finite upper profile limit only", () => {
  let csv = "ward,beds,falls\n";
  const u = rng(1);
  for (let i = 0; i < 30; i++) csv += `a,100,${poissonDraw(u, 5)}\nb,100,${poissonDraw(u, 8)}\nquiet,20,0\n`;
  const { coef, summary } = fitCsv(csv, "falls ~ ward", { exposure: "beds", profile: true });
  const q = coef("ward=quiet");
  assert.equal(q.status, "no_events");
  assert.equal(q.estimate, null);
  assert.equal(q.rate_ratio, 0);
  assert.ok(summary.warnings.some((w) => w.includes("ward=quiet") && w.includes("zero count")));
  assert.equal(q.profile![0], 0, "open lower limit reported as 0");
  assert.ok(q.profile![1]! > 0 && q.profile![1]! < 1, `finite upper limit ${q.profile![1]}`);
  // The other levels keep their closed-form rate ratios.
  const total = (lv: string) =>
    csv
      .split("\n")
      .filter((l) => l.startsWith(`${lv},`))
      .reduce((a, l) => a + Number(l.split(",")[2]), 0);
  assertRel(coef("ward=b").rate_ratio!, total("b") / total("a"), 1e-10, "b unaffected");
});

test("an aliased column is reported and left out", () => {
  let csv = "x,x2,e,y\n";
  const u = rng(2);
  for (let i = 0; i < 40; i++) {
    const x = u();
    csv += `${x},${2 * x + 1},1,${poissonDraw(u, 3 + x)}\n`;
  }
  const { coef, summary } = fitCsv(csv, "y ~ x + x2", { exposure: "e" });
  assert.equal(coef("x2").status, "aliased");
  assert.equal(coef("x2").estimate, null);
  assert.equal(coef("x").status, "estimated");
  assert.ok(summary.warnings.some((w) => w.startsWith("x2 is aliased")));
  assert.equal(summary.df_residual, 38);
});

test("zero-exposure zero-count rows are left out with a notice", () => {
  const csv = "g,e,y\na,1,2\na,0,0\nb,2,5\nb,1,1\na,2,3\n";
  const { summary } = fitCsv(csv, "y ~ g", { exposure: "e" });
  assert.equal(summary.n_used, 4);
  assert.equal(summary.dropped.zero_exposure_zero_count, 1);
  assert.ok(summary.warnings[0].includes("zero exposure and a zero count"));
});

test("frequency weights give the estimates of the expanded rows", () => {
  const u = rng(17);
  let expanded = "g,x,y\n",
    weighted = "g,x,y,w\n";
  for (let i = 0; i < 40; i++) {
    const g = i % 3 === 0 ? "p" : "q";
    const x = Math.round(u() * 10) / 10;
    const y = poissonDraw(u, 2 + x);
    const w = 1 + Math.floor(u() * 4);
    weighted += `${g},${x},${y},${w}\n`;
    for (let k = 0; k < w; k++) expanded += `${g},${x},${y}\n`;
  }
  const a = fitCsv(expanded, "y ~ g + x").summary;
  const b = fitCsv(weighted, "y ~ g + x", { weights: "w" }).summary;
  a.coefficients.forEach((c, k) => {
    assertRel(b.coefficients[k].estimate!, c.estimate!, 1e-10, c.term);
    assertRel(b.coefficients[k].std_error!, c.std_error!, 1e-9, `${c.term} se`);
  });
  assertRel(b.log_likelihood, a.log_likelihood, 1e-10, "log-likelihood");
  assert.equal(b.df_residual, a.df_residual);
});
