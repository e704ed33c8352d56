// Byte-identical reports: every case in test/fixtures/golden/cases.json is run
// through the CLI and compared with the bytes make.mjs saved beside it (first
// taken before the restructuring of issue 12). A change that is meant to alter
// a report regenerates them with `node test/fixtures/golden/make.mjs` and says so.
import { spawn } from "node:child_process";
import { mkdtempSync, readFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { test } from "node:test";
import assert from "node:assert/strict";
import { BIN, FIXTURES, ROOT } from "../helpers.js";

interface GoldenCase {
  name: string;
  args: string[];
  stdinFile?: string;
  stdinHeadLines?: number;
  output?: boolean;
}

const dir = join(FIXTURES, "golden");
const { cases } = JSON.parse(readFileSync(join(dir, "cases.json"), "utf8")) as { cases: GoldenCase[] };
const scratch = mkdtempSync(join(tmpdir(), "tallyfit-golden-"));

function run(c: GoldenCase): Promise<{ code: number | null; stdout: Buffer; stderr: string; file: string }> {
  const file = join(scratch, c.name);
  const args = c.args.map((a) => (a === "{out}" ? file : a));
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, [BIN, ...args], { cwd: ROOT, env: { ...process.env, NO_COLOR: "1" } });
    const out: Buffer[] = [];
    let err = "";
    child.stdout.on("data", (b: Buffer) => out.push(b));
    child.stderr.on("data", (b: Buffer) => (err += b.toString()));
    child.on("error", reject);
    child.on("close", (code) => resolve({ code, stdout: Buffer.concat(out), stderr: err, file }));
    if (c.stdinFile) {
      const lines = readFileSync(join(ROOT, c.stdinFile), "utf8").split("\n").slice(0, c.stdinHeadLines);
      child.stdin.end(`${lines.join("\n")}\n`);
    } else child.stdin.end();
  });
}

for (const c of cases) {
  test(`golden report ${c.name} is byte-identical to its saved copy (test/fixtures/golden)`, async () => {
    const r = await run(c);
    assert.ok(r.code === 0 || r.code === 4, `exit ${r.code}: ${r.stderr}`);
    const actual = c.output ? readFileSync(r.file) : r.stdout;
    const expected = readFileSync(join(dir, c.name));
    assert.equal(actual.toString("utf8"), expected.toString("utf8"));
  });
}
