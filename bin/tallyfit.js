#!/usr/bin/env node
// Starts the compiled command-line interface.
import("../dist/src/cli/main.js")
  .then((m) => m.main(process.argv))
  .catch((e) => {
    process.stderr.write(
      `tallyfit: cannot start (${e?.message ? e.message : e}). Run \`npm install\` in the project folder; it builds the program.\n`,
    );
    process.exitCode = 1;
  });
