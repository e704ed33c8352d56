// Shared test helpers: paths, a one-call fit from CSV text, and a CLI runner.
import { spawnSync } from "node:child_process";
import { dirname, join, resolve } from "node:path";
import { fileURLToPath } from "node:url";
import { buildDesign, type DesignOptions } from "../src/design/design.js";
import { parseTable } from "../src/io/csv.js";
import { parseModel } from "../src/model/formula.js";
import { fitModel, type FamilyChoice } from "../src/fit/model.js";
import { quasiPhi, summarizeFit } from "../src/infer/summary.js";
import { profileAll } from "../src/infer/intervals.js";

export const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), "..", "..");
export const FIXTURES = join(ROOT, "test", "fixtures");
export const BIN = join(ROOT, "bin", "tallyfit.js");

export function fitCsv(csv: string, model: string, options: DesignOptions & { factors?: string[]; family?: FamilyChoice; intercept?: boolean; profile?: boolean } = {}) {
  const table = parseTable(csv, { source: "test.csv", factors: options.factors });
  const design = buildDesign(table, parseModel(model, { intercept: options.intercept }), options);
  const mf = fitModel(design, { family: options.family ?? "poisson" });
  const phi = mf.family === "quasipoisson" ? quasiPhi(design, mf.fit) : 1;
  const profiles = options.profile ? profileAll(design, mf, 0.95, phi) : undefined;
  const summary = summarizeFit(design, mf.fit, { level: 0.95, family: mf.family, nullDeviance: mf.nullDeviance, profiles });
  return { table, design, mf, summary, coef: (term: string) => summary.coefficients.find((c) => c.term === term)! };
}

export function runCli(args: string[], input?: string, env: NodeJS.ProcessEnv = {}) {
  const r = spawnSync(process.execPath, [BIN, ...args], { input, encoding: "utf8", cwd: ROOT, env: { ...process.env, NO_COLOR: "1", ...env } });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

/** |a − b| ≤ tol·max(|b|, tiny): relative agreement. */
export function relClose(a: number, b: number, tol: number): boolean {
  return Math.abs(a - b) <= tol * Math.max(Math.abs(b), 1e-300);
}

export function assertRel(actual: number, expected: number, tol: number, what: string): void {
  if (!relClose(actual, expected, tol))
    throw new Error(`${what}: ${actual} differs from ${expected} by ${(Math.abs(actual - expected) / Math.abs(expected)).toExponential(2)} relative (tolerance ${tol})`);
}

/** A seeded uniform generator (mulberry32) for simulated data in tests. */
export function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Poisson draw by inversion (fine for the moderate means used in tests). */
export function poissonDraw(u: () => number, mean: number): number {
  if (mean > 200) return poissonDraw(u, mean / 2) + poissonDraw(u, mean / 2);
  let k = 0, p = Math.exp(-mean), s = p;
  const x = u();
  while (x > s && k < 100000) { k++; p *= mean / k; s += p; }
  return k;
}
