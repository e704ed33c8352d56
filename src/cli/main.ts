// The command-line entry point: run the program, turn what happened into an
// exit code (0 ok, 1 a bug, 2 bad usage or input, 3 no fit, 4 flagged) and a
// one-line message, never a stack trace unless --debug asks for it.
import { CommanderError } from "commander";
import { EXIT, FitError, InputError } from "../errors.js";
import { buildProgram } from "./program.js";
import { noteStdoutError, stdoutState } from "./output.js";
import { plainMessage, stripAnsi } from "./terminal.js";

export { buildProgram };

export async function main(argv: string[]): Promise<void> {
  // A reader that closes the pipe early (| head) ends the output quietly but keeps the run's exit code; any
  // other failure of stdout (a full disk) is reported and makes the exit code non-zero. A notice that cannot be
  // written to stderr never stops the work.
  process.stdout.on("error", noteStdoutError);
  process.stderr.on("error", () => undefined);
  const debug = argv.includes("--debug");
  let code: number = EXIT.ok;
  try {
    const program = buildProgram((c) => {
      code = c;
    });
    if (argv.length <= 2) {
      program.outputHelp();
      process.exitCode = EXIT.input;
      return;
    }
    // A deliberate fault, so the tests can check how internal errors are reported.
    if (process.env.TALLYFIT_TEST_CRASH === "1") throw new TypeError("deliberate test fault");
    await program.parseAsync(argv);
  } catch (e) {
    code = exitCodeOf(e, debug);
  }
  if (stdoutState.error) {
    process.stderr.write(`tallyfit: error: cannot write the output to standard output (${stdoutState.error}).\n`);
    if (code === EXIT.ok || code === EXIT.flagged) code = EXIT.input;
  }
  process.exitCode = code;
}

/** Report an error on stderr and return its exit code. */
function exitCodeOf(e: unknown, debug: boolean): number {
  if (e instanceof CommanderError)
    return e.code === "commander.helpDisplayed" || e.code === "commander.version" || e.code === "commander.help"
      ? EXIT.ok
      : EXIT.input;
  if (e instanceof InputError || e instanceof FitError) {
    const kind = e instanceof FitError ? "the model could not be fitted" : "error";
    process.stderr.write(`tallyfit: ${kind}: ${plainMessage(stripAnsi(e.message))}\n`);
    return e.exitCode;
  }
  const err = e as Error;
  process.stderr.write(
    `tallyfit: internal error: ${plainMessage(err?.message ?? String(e))}\nThis is a bug in tallyfit; please report it with the command you ran.${debug ? "" : " (--debug shows the stack trace)"}\n`,
  );
  if (debug && err?.stack) process.stderr.write(`${err.stack}\n`);
  return EXIT.internal;
}
