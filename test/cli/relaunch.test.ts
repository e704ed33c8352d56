// The relaunch with huge pages (src/cli/relaunch.ts): when it is made, and that
// it is invisible to the user: the same output bytes, messages and exit codes
// with it and without it (TALLYFIT_HUGE_PAGES=0), on an input above its size.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { RELAUNCH_MIN_BYTES, type RelaunchContext, relaunchEnv } from "../../src/cli/relaunch.js";
import { ROOT, runCli } from "../helpers.js";

const BIG = 1 << 30;
const context = (over: Partial<RelaunchContext> = {}): RelaunchContext => ({
  argv: ["node", "tallyfit", "fit", "big.csv", "--model", "y ~ x"],
  env: {},
  platform: "linux",
  hugePages: "always [madvise] never\n",
  fileSize: (p) => (p === "big.csv" ? BIG : p === "small.csv" ? 1000 : -1),
  glibc: () => "2.36",
  ...over,
});

test("relaunched with glibc's huge-page tunable only for a large input file where the kernel grants huge pages on request", () => {
  assert.equal(relaunchEnv(context())?.GLIBC_TUNABLES, "glibc.malloc.hugetlb=1");
  assert.equal(
    relaunchEnv(context({ env: { GLIBC_TUNABLES: "glibc.malloc.arena_max=2" } }))?.GLIBC_TUNABLES,
    "glibc.malloc.arena_max=2:glibc.malloc.hugetlb=1",
  );
  // Not: a small file, standard input, a file not found, the tunable already set (the child itself), opted out,
  // huge pages always or never given, another system, another C library, a glibc without the tunable.
  assert.equal(relaunchEnv(context({ argv: ["node", "tallyfit", "fit", "small.csv"] })), null);
  assert.equal(relaunchEnv(context({ argv: ["node", "tallyfit", "fit", "-"] })), null);
  assert.equal(relaunchEnv(context({ fileSize: () => -1 })), null);
  assert.equal(relaunchEnv(context({ env: { GLIBC_TUNABLES: "glibc.malloc.hugetlb=1" } })), null);
  assert.equal(relaunchEnv(context({ env: { TALLYFIT_HUGE_PAGES: "0" } })), null);
  assert.equal(relaunchEnv(context({ hugePages: "[always] madvise never" })), null);
  assert.equal(relaunchEnv(context({ hugePages: "always madvise [never]" })), null);
  assert.equal(relaunchEnv(context({ hugePages: "" })), null);
  assert.equal(relaunchEnv(context({ platform: "darwin" })), null);
  assert.equal(relaunchEnv(context({ glibc: () => null })), null);
  assert.equal(relaunchEnv(context({ glibc: () => "2.31" })), null);
  assert.notEqual(relaunchEnv(context({ glibc: () => "3.0" })), null);
});

test("with and without the relaunch: the same JSON, messages and exit codes on an input above the relaunch size", () => {
  // The bundled example repeated until the file passes the size at which the relaunch is made.
  const example = readFileSync(join(ROOT, "examples", "clinic_visits.csv"), "utf8");
  const [header, ...lines] = example.trimEnd().split("\n");
  const body = `${lines.join("\n")}\n`;
  const copies = Math.ceil(RELAUNCH_MIN_BYTES / body.length) + 1;
  const file = join(mkdtempSync(join(tmpdir(), "tallyfit-relaunch-")), "visits.csv");
  writeFileSync(file, `${header}\n${body.repeat(copies)}`);
  const fit = ["fit", file, "--model", "visits ~ clinic + weekday", "--exposure", "open_hours", "--format", "json"];
  for (const args of [
    [...fit, "--intervals", "wald", "--quiet"],
    ["fit", file, "--model", "visits ~ clinic + no_such_column", "--format", "json"],
  ]) {
    const plain = runCli(args, undefined, { TALLYFIT_HUGE_PAGES: "0" });
    const relaunched = runCli(args);
    assert.deepEqual(relaunched, plain, args.join(" "));
  }
  const ok = runCli([...fit, "--intervals", "wald", "--quiet"]);
  assert.equal(ok.code, 0);
  assert.equal(JSON.parse(ok.stdout).n_rows, lines.length * copies);
  const bad = runCli(["fit", file, "--model", "visits ~ clinic + no_such_column"]);
  assert.equal(bad.code, 2);
  assert.match(bad.stderr, /no_such_column/);
  assert.doesNotMatch(bad.stderr, /at .*\.js:\d+/);
});
