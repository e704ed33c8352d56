// Profile-likelihood limits against outside references, closed forms and simulation.
import { test } from "node:test";
import assert from "node:assert/strict";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { FIXTURES, assertRel, fitCsv, poissonDraw, rng } from "../helpers.js";
import { brentRoot } from "../../src/math/roots.js";
import { chiSquareQuantile, lgamma } from "../../src/math/distributions.js";

const expected = JSON.parse(readFileSync(join(FIXTURES, "scipy", "expected.json"), "utf8"));
const fixture = (name: string) => readFileSync(join(FIXTURES, "scipy", name), "utf8");

for (const family of ["poisson", "negbin"] as const) {
  test(`${family} profile limits match scipy.optimize constrained fits with brentq crossings (${expected.source}) to 1e-5 relative`, () => {
    const ref = expected.profile[family];
    const { coef } = fitCsv(fixture(ref.data), ref.model, { exposure: ref.exposure, family, profile: true });
    for (const [term, lim] of Object.entries(ref.limits) as [string, { lower: number; upper: number }][]) {
      assertRel(coef(term).profile![0]!, lim.lower, 1e-5, `${term} lower`);
      assertRel(coef(term).profile![1]!, lim.upper, 1e-5, `${term} upper`);
    }
  });
}

test(`zero-event level: lower limit 0 (open), upper limit finite and matching the reference (${expected.source}) to 1e-4`, () => {
  const ref = expected.profile.zero_level;
  const { coef, summary } = fitCsv(fixture(ref.data), ref.model, { exposure: ref.exposure, profile: true });
  const c = coef(ref.term);
  assert.equal(c.status, "no_events");
  assert.equal(c.profile![0], 0);
  assertRel(c.profile![1]!, ref.upper, 1e-4, "upper limit");
  assert.ok(
    !summary.warnings.some((w) => w.includes("lower profile limit")),
    "the open lower side is expected, not warned about",
  );
});

test("closed form: single-factor Poisson profile limits equal those of the one-dimensional likelihood of two rates", () => {
  const u = rng(12);
  let csv = "g,e,y\n";
  const sums = { a: [0, 0], b: [0, 0] };
  for (let i = 0; i < 40; i++) {
    const g = i % 2 ? "b" : "a";
    const e = 1 + 3 * u();
    const y = poissonDraw(u, e * (g === "a" ? 0.8 : 1.5));
    sums[g as "a" | "b"][0] += y;
    sums[g as "a" | "b"][1] += e;
    csv += `${g},${e},${y}\n`;
  }
  const [ya, ea] = sums.a,
    [yb, eb] = sums.b;
  // With the intercept profiled out: e^{b0} = (ya + yb)/(ea + eb·e^β), so ℓ(β) is one-dimensional.
  const ll = (beta: number) => {
    const r0 = (ya + yb) / (ea + eb * Math.exp(beta));
    return ya * Math.log(r0 * ea) - r0 * ea + yb * Math.log(r0 * eb * Math.exp(beta)) - r0 * eb * Math.exp(beta);
  };
  const bhat = Math.log(yb / eb / (ya / ea));
  const crit = chiSquareQuantile(0.95, 1);
  const f = (b: number) => 2 * (ll(bhat) - ll(b)) - crit;
  const lo = Math.exp(brentRoot(f, bhat - 3, bhat, 1e-13));
  const hi = Math.exp(brentRoot(f, bhat, bhat + 3, 1e-13));
  const { coef } = fitCsv(csv, "y ~ g", { exposure: "e", profile: true, refs: { g: "a" } });
  assertRel(coef("g=b").profile![0]!, lo, 1e-7, "lower");
  assertRel(coef("g=b").profile![1]!, hi, 1e-7, "upper");
  void lgamma;
});

test("agreement: with large counts profile and Wald limits agree within 1%", () => {
  const u = rng(13);
  let csv = "g,x,e,y\n";
  for (let i = 0; i < 300; i++) {
    const x = u();
    csv += `${i % 3},${x},${100},${poissonDraw(u, 100 * (1 + (i % 3) * 0.2) * Math.exp(0.3 * x))}\n`;
  }
  const { summary } = fitCsv(csv, "y ~ g + x", { exposure: "e", factors: ["g"], profile: true });
  for (const c of summary.coefficients) {
    assertRel(c.profile![0]!, c.wald![0]!, 0.01, `${c.term} lower`);
    assertRel(c.profile![1]!, c.wald![1]!, 0.01, `${c.term} upper`);
  }
});

test("coverage by simulation (seeded, a known property, common practice): with means 1 to 4, profile intervals cover within ±3 points of 95% and closer than Wald", () => {
  const u = rng(2026);
  const trueRR = 2;
  let coverP = 0,
    coverW = 0;
  const reps = 400;
  for (let r = 0; r < reps; r++) {
    let csv = "g,e,y\n";
    for (let i = 0; i < 3; i++) {
      const e = 1 + u() * 3; // means 1 to 4 in the reference group, 2 to 8 in the other
      csv += `a,${e},${poissonDraw(u, e)}\nb,${e},${poissonDraw(u, trueRR * e)}\n`;
    }
    let s: ReturnType<ReturnType<typeof fitCsv>["coef"]>;
    try {
      s = fitCsv(csv, "y ~ g", { exposure: "e", profile: true, refs: { g: "a" } }).coef("g=b");
    } catch {
      continue;
    }
    if (s.status !== "estimated") continue;
    if (s.profile![0]! <= trueRR && trueRR <= (s.profile![1] ?? Infinity)) coverP++;
    if (s.wald![0]! <= trueRR && trueRR <= s.wald![1]!) coverW++;
  }
  const pP = (100 * coverP) / reps,
    pW = (100 * coverW) / reps;
  assert.ok(Math.abs(pP - 95) <= 3, `profile coverage ${pP}%`);
  assert.ok(Math.abs(pP - 95) <= Math.abs(pW - 95), `profile ${pP}% should be closer to 95% than Wald ${pW}%`);
});

test("quasi-Poisson profile limits widen with phi and use the F(1, df) reference", () => {
  const u = rng(14);
  let csv = "g,e,y\n";
  for (let i = 0; i < 120; i++) csv += `${i % 2 ? "b" : "a"},2,${poissonDraw(u, 2 * 5 * (0.3 + 1.4 * u()))}\n`;
  const p = fitCsv(csv, "y ~ g", { exposure: "e", profile: true, refs: { g: "a" } });
  const q = fitCsv(csv, "y ~ g", { exposure: "e", profile: true, family: "quasipoisson" });
  assert.ok(q.summary.dispersion.phi_used > 1.5);
  assert.ok(q.coef("g=b").profile![0]! < p.coef("g=b").profile![0]!);
  assert.ok(q.coef("g=b").profile![1]! > p.coef("g=b").profile![1]!);
  assert.match(q.summary.profile_reference!, /F\(1, 118\)/);
});
