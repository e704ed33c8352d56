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

/** Progress of the fit on stderr: only for large data on a terminal, never with --quiet. */
export function fittingProgress(opts: { quiet?: boolean }, rows: number): ((message: string) => void) | undefined {
  if (opts.quiet || !process.stderr.isTTY || rows < 100000) return undefined;
  return (message) => process.stderr.write(`\r${ESC}[Ktallyfit: ${message}`);
}

/** Colour codes removed, for messages that must stay plain. */
export function stripAnsi(s: string): string {
  return s.replace(new RegExp(`${ESC}\\[[0-9;]*m`, "g"), "");
}
