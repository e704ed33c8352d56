// Every JSON output validates against its shipped JSON Schema (draft-07), checked with ajv.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, readFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import AjvModule from "ajv";
import { ROOT, runCli } from "../helpers.js";

const Ajv = (AjvModule as unknown as { default: typeof AjvModule }).default ?? AjvModule;
const ajv = new (
  Ajv as unknown as new (
    o: object,
  ) => { compile(s: object): ((d: unknown) => boolean) & { errors?: unknown } }
)({ allErrors: true, strict: false });
const compiled = new Map<string, ReturnType<typeof ajv.compile>>();
const schema = (name: string) => {
  if (!compiled.has(name))
    compiled.set(name, ajv.compile(JSON.parse(readFileSync(join(ROOT, "schemas", `${name}-1.schema.json`), "utf8"))));
  return compiled.get(name)!;
};

const EX = "examples/clinic_visits.csv";
const BASE = ["--exposure", "open_hours", "--format", "json", "--quiet"];

function valid(name: string, text: string) {
  const v = schema(name);
  const data = JSON.parse(text);
  const ok = v(data);
  assert.ok(ok, `${name}: ${JSON.stringify(v.errors, null, 1)}`);
  return data;
}

test("fit JSON (Poisson, negative binomial with term tests and summary-by) validates against fit-1.schema.json", () => {
  valid("fit", runCli(["fit", EX, "--model", "visits ~ clinic + weekday", ...BASE]).stdout);
  const nb = valid(
    "fit",
    runCli([
      "fit",
      EX,
      "--model",
      "visits ~ clinic + flu_season",
      "--family",
      "negbin",
      "--summary-by",
      "clinic",
      "--intervals",
      "wald",
      ...BASE,
    ]).stdout,
  );
  assert.ok(nb.negbin && nb.summary_by && nb.term_tests);
});

test("check, compare, predict and model files validate against their schemas", () => {
  valid("check", runCli(["check", EX, "--model", "visits ~ clinic + weekday", ...BASE]).stdout);
  valid(
    "compare",
    runCli(["compare", EX, "--model", "visits ~ clinic", "--model", "visits ~ clinic + weekday", ...BASE]).stdout,
  );
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-"));
  const model = join(dir, "m.json");
  runCli([
    "fit",
    EX,
    "--model",
    "visits ~ clinic + weekday + staff_on_duty + flu_season",
    "--exposure",
    "open_hours",
    "--family",
    "negbin",
    "--intervals",
    "wald",
    "--save-model",
    model,
    "--quiet",
  ]);
  valid("model", readFileSync(model, "utf8"));
  valid(
    "predict",
    runCli([
      "predict",
      "--model-file",
      model,
      "examples/clinic_visits_week49.csv",
      "--format",
      "json",
      "--summary-by",
      "clinic",
      "--draws",
      "200",
    ]).stdout,
  );
});

test("the schemas reject what the contract forbids (a validator that cannot fail checks nothing)", () => {
  const v = schema("fit");
  const good = JSON.parse(runCli(["fit", EX, "--model", "visits ~ clinic", ...BASE, "--intervals", "wald"]).stdout);
  assert.ok(v(good));
  assert.equal(v({ ...good, schema: "tallyfit.fit/2" }), false);
  const { deviance: _d, ...noDeviance } = good;
  assert.equal(v(noDeviance), false);
  assert.equal(v({ ...good, coefficients: [{ ...good.coefficients[0], status: "guessed" }] }), false);
});

test("determinism: JSON and CSV outputs of every command are byte-identical run after run", () => {
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-"));
  const model = join(dir, "m.json");
  const runs = [
    ["fit", EX, "--model", "visits ~ clinic + weekday", ...BASE],
    [
      "fit",
      EX,
      "--model",
      "visits ~ clinic + weekday",
      "--exposure",
      "open_hours",
      "--format",
      "csv",
      "--family",
      "negbin",
    ],
    ["check", EX, "--model", "visits ~ clinic", ...BASE],
  ];
  for (const args of runs) assert.equal(runCli(args).stdout, runCli(args).stdout, args.join(" "));
  runCli([
    "fit",
    EX,
    "--model",
    "visits ~ clinic + weekday",
    "--exposure",
    "open_hours",
    "--save-model",
    model,
    "--intervals",
    "wald",
    "--quiet",
  ]);
  const first = readFileSync(model, "utf8");
  runCli([
    "fit",
    EX,
    "--model",
    "visits ~ clinic + weekday",
    "--exposure",
    "open_hours",
    "--save-model",
    model,
    "--intervals",
    "wald",
    "--quiet",
  ]);
  assert.equal(readFileSync(model, "utf8"), first);
  const p = ["predict", "--model-file", model, "examples/clinic_visits_week49.csv", "--draws", "300"];
  assert.equal(runCli(p).stdout, runCli(p).stdout);
});
