// Where a run's results go: files all or nothing (run-outputs.ts), the report
// to stdout otherwise, with a failed stdout remembered for the exit code.
import { dirname, relative, resolve } from "node:path";
import type { Diagnostics } from "../analysis/fit.js";
import type { FitSummary } from "../infer/summary.js";
import { svgToPng } from "../report/png.js";
import { makeStyle, type Style, wantColor } from "../report/style.js";
import { renderSvg } from "../report/svg.js";
import { plotKind } from "./options.js";
import type { RunOutputs } from "./run-outputs.js";
import { notice } from "./terminal.js";

/** Set when standard output failed: a closed pipe (EPIPE) is quiet, any other error is reported at exit. */
export const stdoutState: { closed: boolean; error: string | null } = { closed: false, error: null };

/** Write to stdout, resolving when the data is handed on; after a failure further writes are dropped. */
export function writeStdout(content: string): Promise<void> {
  return new Promise((resolve) => {
    if (stdoutState.closed || stdoutState.error) return resolve();
    try {
      process.stdout.write(content, (e) => {
        if (e) noteStdoutError(e);
        resolve();
      });
    } catch (e) {
      // A file on a full disk (stdout redirected to it) fails at once.
      noteStdoutError(e as Error);
      resolve();
    }
  });
}

/** Remember a failure of stdout: a closed pipe quietly, anything else for the exit code. */
export function noteStdoutError(e: Error): void {
  const code = (e as NodeJS.ErrnoException).code;
  if (code === "EPIPE") stdoutState.closed = true;
  else stdoutState.error ??= code === "ENOSPC" ? "the disk is full" : String(code ?? e.message);
}

/** The text layout for a report: colour and width when it goes to a terminal. */
export function textLayout(opts: { output?: string; color: boolean }): { style: Style; width: number } {
  const toTTY = !opts.output && process.stdout.isTTY;
  const color = !opts.output && wantColor(process.stdout.isTTY, process.env, opts.color);
  return { style: makeStyle(color), width: toTTY ? Math.max(60, Math.min(process.stdout.columns ?? 100, 120)) : 100 };
}

/**
 * The end of a run: every file it writes, all or nothing (the report with
 * --output among them), then the report on stdout when there is no --output.
 */
export async function finish(
  outputs: RunOutputs,
  opts: { output?: string; quiet?: boolean },
  content: string,
): Promise<void> {
  if (opts.output) outputs.add(opts.output, "--output", content);
  await outputs.commit();
  for (const [path, what] of outputs.written()) notice(opts, `${what} written to ${path}`);
  if (!opts.output) await writeStdout(content);
}

/** The diagnostic page as SVG or PNG (by the file name), queued with the run's outputs. */
export function addPlot(outputs: RunOutputs, path: string, title: string, d: Diagnostics, summary: FitSummary): void {
  const svg = plotSvg(title, d, summary);
  outputs.add(path, "--plot", plotKind(path) === "svg" ? svg : svgToPng(svg));
}

/** The diagnostic page (rootogram, residuals, forest plot) as SVG. */
export function plotSvg(title: string, d: Diagnostics, summary: FitSummary): string {
  return renderSvg({ title, rootogram: d.rootogram, fitted: d.fitted, residuals: d.residuals, summary });
}

/** How a Markdown report refers to the --plot file: relative to the report's directory (--output), else as given. */
export function plotReference(opts: { output?: string; plot?: string }): string | undefined {
  if (!opts.plot) return undefined;
  return opts.output ? relative(dirname(resolve(opts.output)), resolve(opts.plot)) || opts.plot : opts.plot;
}
