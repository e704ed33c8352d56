// Shared test helpers: paths, a one-call fit from CSV text, and a CLI runner.
import { spawnSync } from "node:child_process";
import { readFileSync } from "node:fs";
import AjvModule from "ajv";
import { dirname, join, resolve } from "node:path";
import { fileURLToPath } from "node:url";
import { buildDesign, type DesignOptions } from "../src/design/design.js";
import { parseTable } from "../src/io/csv.js";
import { parseFormula } from "../src/formula/formula.js";
import type { FamilyChoice } from "../src/fit/count-fit.js";
import { analyzeFit } from "../src/analysis/fit.js";
import { uniformGenerator } from "../src/math/random.js";
import { negbinDraw } from "../src/math/random.js";
export { gammaDraw, negbinDraw, normalDraw, poissonDraw } from "../src/math/random.js";

export const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), "..", "..");
export const FIXTURES = join(ROOT, "test", "fixtures");
export const BIN = join(ROOT, "bin", "tallyfit.js");

export function fitCsv(
  csv: string,
  model: string,
  options: DesignOptions & {
    factors?: string[];
    family?: FamilyChoice;
    intercept?: boolean;
    profile?: boolean;
    robust?: boolean;
  } = {},
) {
  const table = parseTable(csv, { source: "test.csv", factors: options.factors });
  const design = buildDesign(table, parseFormula(model, { intercept: options.intercept }), options);
  const { countFit: mf, summary } = analyzeFit(design, {
    family: options.family ?? "poisson",
    level: 0.95,
    intervals: options.profile ? "both" : "wald",
    robust: options.robust,
  });
  return { table, design, mf, summary, coef: (term: string) => summary.coefficients.find((c) => c.term === term)! };
}

export function runCli(args: string[], input?: string, env: NodeJS.ProcessEnv = {}) {
  const r = spawnSync(process.execPath, [BIN, ...args], {
    input,
    encoding: "utf8",
    cwd: ROOT,
    env: { ...process.env, NO_COLOR: "1", ...env },
  });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

/** |a − b| ≤ tol·max(|b|, tiny): relative agreement. */
export function relClose(a: number, b: number, tol: number): boolean {
  return Math.abs(a - b) <= tol * Math.max(Math.abs(b), 1e-300);
}

export function assertRel(actual: number, expected: number, tol: number, what: string): void {
  if (!relClose(actual, expected, tol))
    throw new Error(
      `${what}: ${actual} differs from ${expected} by ${(Math.abs(actual - expected) / Math.abs(expected)).toExponential(2)} relative (tolerance ${tol})`,
    );
}

/** A seeded uniform generator for simulated data in tests (the project's own, src/infer/random.ts). */
export const rng = uniformGenerator;

/** Two-sided 99.9% limits for a Binomial(n, p) count, from the exact distribution. */
export function binomialLimits(n: number, p: number, level = 0.999): [number, number] {
  const pmf: number[] = [];
  let logc = 0;
  for (let k = 0; k <= n; k++) {
    if (k > 0) logc += Math.log((n - k + 1) / k);
    pmf.push(Math.exp(logc + k * Math.log(p) + (n - k) * Math.log(1 - p)));
  }
  const tail = (1 - level) / 2;
  let lo = 0,
    acc = 0;
  while (acc + pmf[lo] < tail) {
    acc += pmf[lo];
    lo++;
  }
  let hi = n;
  acc = 0;
  while (acc + pmf[hi] < tail) {
    acc += pmf[hi];
    hi--;
  }
  return [lo, hi];
}

/** CSV text of a simulated rate data set: group g (3 levels), numeric x, exposure e, count y. */
export function simulateRates(u: () => number, n: number, alpha: number, base = 2): string {
  let csv = "g,x,e,y\n";
  const eff = [0, 0.4, -0.3];
  for (let i = 0; i < n; i++) {
    const g = i % 3;
    const x = u();
    const e = 1 + 4 * u();
    const mu = e * base * Math.exp(eff[g] + 0.5 * x);
    csv += `g${g},${x},${e},${negbinDraw(u, mu, alpha)}\n`;
  }
  return csv;
}

type Validator = ((data: unknown) => boolean) & { errors?: unknown };
const Ajv = (AjvModule as unknown as { default: typeof AjvModule }).default ?? AjvModule;
const ajv = new (Ajv as unknown as new (o: object) => { compile(s: object): Validator })({
  allErrors: true,
  strict: false,
});
const validators = new Map<string, Validator>();

/** A validator (ajv, draft-07) of one of the shipped JSON Schemas, by name: "fit" for schemas/fit-1.schema.json. */
export function schemaValidator(name: string): Validator {
  if (!validators.has(name))
    validators.set(name, ajv.compile(JSON.parse(readFileSync(join(ROOT, "schemas", `${name}-1.schema.json`), "utf8"))));
  return validators.get(name)!;
}
