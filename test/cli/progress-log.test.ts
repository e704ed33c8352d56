// Progress when stderr is not a terminal (a log file, a CI job): a plain line
// at most every 5 seconds once the work has run 2 seconds, nothing for short
// work, nothing with --quiet.
import { test } from "node:test";
import assert from "node:assert/strict";
import { fittingProgress } from "../../src/cli/terminal.js";

test("non-terminal progress: silent for the first 2 s, then a line at most every 5 s; none with --quiet", () => {
  let now = 0;
  const lines: string[] = [];
  const write = process.stderr.write.bind(process.stderr);
  process.stderr.write = ((s: string) => {
    lines.push(s);
    return true;
  }) as typeof process.stderr.write;
  try {
    const p = fittingProgress({}, 10, () => now, false)!;
    for (now = 0; now <= 13000; now += 500) p(`step at ${now}`);
    assert.equal(
      fittingProgress({ quiet: true }, 10, () => now, false),
      undefined,
      "--quiet",
    );
    assert.equal(
      fittingProgress({}, 10, () => now, true),
      undefined,
      "on a terminal, small data: no progress line",
    );
  } finally {
    process.stderr.write = write;
  }
  assert.deepEqual(lines, ["tallyfit: step at 2000\n", "tallyfit: step at 7000\n", "tallyfit: step at 12000\n"]);
});
