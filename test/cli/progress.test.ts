// Progress on stderr for large inputs: shown on a terminal, never with
// --quiet or when stderr is not a terminal, and never on stdout.
import { test } from "node:test";
import assert from "node:assert/strict";
import { spawnSync } from "node:child_process";
import { existsSync, mkdtempSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { writeBenchFile } from "../../bench/generate.js";
import { BIN, ROOT } from "../helpers.js";

const SCRIPT = "/usr/bin/script"; // util-linux: runs a command on a pseudo-terminal

test("IRLS progress appears on a terminal's stderr for 100,000 rows, and not with --quiet or on a pipe", {
  skip: existsSync(SCRIPT) ? false : `${SCRIPT} is not installed`,
}, async () => {
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-progress-"));
  try {
    const file = join(dir, "rows.csv");
    await writeBenchFile(file, 100000, 3);
    const out = join(dir, "report.json");
    const cmd = (extra: string) =>
      `'${process.execPath}' '${BIN}' fit '${file}' --model 'visits ~ region + agegrp + sex' --exposure exposure --intervals wald --format json --output '${out}' ${extra}`;
    // On a pseudo-terminal, stdout and stderr both reach the terminal; --output keeps the report apart.
    const tty = spawnSync(SCRIPT, ["-qec", cmd(""), "/dev/null"], { cwd: ROOT, encoding: "utf8" });
    assert.equal(tty.status, 0, tty.stdout + tty.stderr);
    assert.match(tty.stdout, /tallyfit: fitting the poisson model over 240 patterns: IRLS iteration 1, deviance \d/);
    assert.match(tty.stdout, /refitting for 3 term tests/);
    assert.equal(JSON.parse(readFileSync(out, "utf8")).n_used, 100000);
    const quiet = spawnSync(SCRIPT, ["-qec", cmd("--quiet"), "/dev/null"], { cwd: ROOT, encoding: "utf8" });
    assert.equal(quiet.status, 0);
    assert.doesNotMatch(quiet.stdout, /IRLS iteration/);
    const pipe = spawnSync(
      process.execPath,
      [
        BIN,
        "fit",
        file,
        "--model",
        "visits ~ region + agegrp + sex",
        "--exposure",
        "exposure",
        "--intervals",
        "wald",
        "--format",
        "json",
      ],
      { cwd: ROOT, encoding: "utf8" },
    );
    assert.equal(pipe.status, 0);
    assert.doesNotMatch(pipe.stderr, /IRLS iteration/);
    assert.equal(JSON.parse(pipe.stdout).n_used, 100000, "stdout holds only the report");
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
});
