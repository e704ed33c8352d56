// What goes to stderr: notices and progress lines (progress only on a
// terminal, never with --quiet).
import { escapeControls, shortenLongWords } from "../report/safe-text.js";

const ESC = String.fromCharCode(27);

export function notice(opts: { quiet?: boolean }, msg: string): void {
  if (!opts.quiet) process.stderr.write(`tallyfit: ${plainMessage(msg)}\n`);
}

/** A message fit for a terminal: no control characters from the data, no 10 MB words. */
export function plainMessage(msg: string): string {
  return escapeControls(shortenLongWords(msg));
}

/** Wipe the progress line before anything else is written to stderr. */
export function clearProgressLine(): void {
  process.stderr.write(`\r${ESC}[K`);
}

/** Progress on stderr while reading a large input. */
export function readingProgress(): (bytes: number, rows: number) => void {
  let last = 0;
  return (bytes, rows) => {
    if (bytes < 32e6 || Date.now() - last < 200) return;
    last = Date.now();
    process.stderr.write(`\rtallyfit: reading ${(bytes / 1e6).toFixed(0)} MB, ${rows.toLocaleString("en")} rows…`);
  };
}

/**
 * Progress of the fit on stderr, never with --quiet. On a terminal, a line
 * rewritten in place for large data; elsewhere (a log file, a CI job), once
 * the work has run for 2 seconds, a plain line at most every 5 seconds, so a
 * long run is never silent and a short one prints nothing.
 */
export function fittingProgress(
  opts: { quiet?: boolean },
  rows: number,
  clock: () => number = Date.now,
  onTerminal: boolean = process.stderr.isTTY === true,
): ((message: string) => void) | undefined {
  if (opts.quiet) return undefined;
  if (onTerminal) {
    if (rows < 100000) return undefined;
    return (message) => process.stderr.write(`\r${ESC}[Ktallyfit: ${message}`);
  }
  const start = clock();
  let last = -Infinity;
  return (message) => {
    const now = clock();
    if (now - start < 2000 || now - last < 5000) return;
    last = now;
    process.stderr.write(`tallyfit: ${message}\n`);
  };
}

/** Whether fittingProgress rewrites a terminal line (which then needs clearing). */
export function progressOnTerminal(): boolean {
  return process.stderr.isTTY === true;
}

/** Colour codes removed, for messages that must stay plain. */
export function stripAnsi(s: string): string {
  return s.replace(new RegExp(`${ESC}\\[[0-9;]*m`, "g"), "");
}
