// Property-based tests (fast-check): no crash on random valid data, row-order invariance, and a loader that never crashes.
import { test } from "node:test";
import assert from "node:assert/strict";
import fc from "fast-check";
import { analyzeFit } from "../../src/analysis/fit.js";
import { buildDesign } from "../../src/design/design.js";
import { FitError, InputError } from "../../src/errors.js";
import { parseTable } from "../../src/io/csv.js";
import { parseFormula } from "../../src/formula/formula.js";

export const RUNS = { data: 150, order: 100, bytes: 300, text: 300 };

const rowArb = fc.record({
  g: fc.constantFrom("a", "b", "c", "d"),
  x: fc.double({ min: -5, max: 5, noNaN: true }),
  e: fc.double({ min: 0.05, max: 20, noNaN: true }),
  y: fc.nat({ max: 40 }),
});
const datasetArb = fc.array(rowArb, { minLength: 3, maxLength: 40 });

function toCsv(rows: { g: string; x: number; e: number; y: number }[]): string {
  return `g,x,e,y\n${rows.map((r) => `${r.g},${r.x},${r.e},${r.y}`).join("\n")}\n`;
}

function fit(csv: string, family: "poisson" | "negbin") {
  const design = buildDesign(parseTable(csv, { source: "prop.csv" }), parseFormula("y ~ g + x"), { exposure: "e" });
  return analyzeFit(design, { family, level: 0.95, intervals: "both" }).summary;
}

function typedOnly(f: () => unknown): void {
  try {
    f();
  } catch (e) {
    if (e instanceof InputError || e instanceof FitError) return;
    throw e;
  }
}

test(`random small valid data sets never raise an untyped exception (${RUNS.data} runs × 2 families)`, () => {
  fc.assert(
    fc.property(datasetArb, fc.constantFrom("poisson" as const, "negbin" as const), (rows, family) =>
      typedOnly(() => fit(toCsv(rows), family)),
    ),
    { numRuns: RUNS.data, seed: 42 },
  );
});

test(`results are invariant to row order (${RUNS.order} runs)`, () => {
  fc.assert(
    fc.property(datasetArb, fc.infiniteStream(fc.nat()), (rows, stream) => {
      let a: ReturnType<typeof fit>;
      try {
        a = fit(toCsv(rows), "poisson");
      } catch (e) {
        if (e instanceof InputError || e instanceof FitError) return;
        throw e;
      }
      const it = stream[Symbol.iterator]();
      const shuffled = [...rows];
      for (let i = shuffled.length - 1; i > 0; i--) {
        const j = (it.next().value as number) % (i + 1);
        [shuffled[i], shuffled[j]] = [shuffled[j], shuffled[i]];
      }
      const b = fit(toCsv(shuffled), "poisson");
      const close = (u: number | null, v: number | null) =>
        (u === null && v === null) || (u !== null && v !== null && Math.abs(u - v) <= 1e-6 * (1 + Math.abs(v)));
      assert.ok(close(a.deviance, b.deviance), `deviance ${a.deviance} vs ${b.deviance}`);
      a.coefficients.forEach((c, k) => {
        assert.equal(b.coefficients[k].status, c.status);
        if (c.status === "estimated" && Math.abs(c.estimate!) < 15)
          assert.ok(close(c.estimate, b.coefficients[k].estimate), `${c.term}`);
      });
    }),
    { numRuns: RUNS.order, seed: 7 },
  );
});

test(`random byte strings fed to the loader give data or a typed input error (${RUNS.bytes} runs)`, () => {
  fc.assert(
    fc.property(fc.uint8Array({ maxLength: 300 }), (bytes) =>
      typedOnly(() => parseTable(bytes, { source: "bytes.csv" })),
    ),
    { numRuns: RUNS.bytes, seed: 3 },
  );
});

test(`random CSV-like text (quotes, delimiters, line breaks) gives data or a typed input error (${RUNS.text} runs)`, () => {
  const chars = fc.constantFrom("a", "1", ",", '"', "\n", "\r", ";", " ", ".", "-", "NA");
  fc.assert(
    fc.property(fc.array(chars, { maxLength: 120 }), (parts) =>
      typedOnly(() => {
        const t = parseTable(`h1,h2\n${parts.join("")}`, { source: "text.csv" });
        assert.deepEqual(t.header, ["h1", "h2"]);
      }),
    ),
    { numRuns: RUNS.text, seed: 5 },
  );
});
