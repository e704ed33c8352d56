#!/usr/bin/env node
// Starts the compiled command-line interface (in a child with huge pages when
// the input is large: see src/cli/relaunch.ts).
import("../dist/src/cli/relaunch.js")
  .then((r) => r.relaunchForHugePages(process.argv))
  .then((relaunched) => relaunched || import("../dist/src/cli/main.js").then((m) => m.main(process.argv)))
  .catch((e) => {
    process.stderr.write(
      `tallyfit: cannot start (${e?.message ? e.message : e}). Run \`npm install\` in the project folder; it builds the program.\n`,
    );
    process.exitCode = 1;
  });
