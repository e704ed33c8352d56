// Writing results without ever destroying an earlier file: write a temporary
// file in the same folder, then rename it into place (atomic on POSIX).
import { randomBytes } from "node:crypto";
import { rename, unlink, writeFile } from "node:fs/promises";
import { basename, dirname, join } from "node:path";
import type { Diagnostics } from "../analysis/fit.js";
import { InputError } from "../errors.js";
import type { FitSummary } from "../infer/summary.js";
import { svgToPng } from "../report/png.js";
import { makeStyle, type Style, wantColor } from "../report/style.js";
import { renderSvg } from "../report/svg.js";
import { plotKind } from "./options.js";
import { notice } from "./terminal.js";

export async function writeAtomic(path: string, content: string | Uint8Array): Promise<void> {
  const tmp = join(dirname(path), `.${basename(path)}.tmp-${process.pid}-${randomBytes(4).toString("hex")}`);
  try {
    await writeFile(tmp, content, { flag: "wx" });
    await rename(tmp, path);
  } catch (e) {
    await unlink(tmp).catch(() => undefined);
    const code = (e as NodeJS.ErrnoException).code;
    const why =
      code === "ENOENT"
        ? "the folder does not exist"
        : code === "EACCES" || code === "EPERM"
          ? "permission denied"
          : code === "ENOSPC"
            ? "the disk is full"
            : code === "EISDIR"
              ? "it is a folder"
              : String(code ?? e);
    throw new InputError(`cannot write ${path} (${why}); any earlier file there is unchanged.`);
  }
}

/** Write to stdout, resolving when flushed; a closed pipe (EPIPE) ends quietly. */
export function writeStdout(content: string): Promise<void> {
  return new Promise((resolve) => {
    if (!process.stdout.write(content)) process.stdout.once("drain", () => resolve());
    else resolve();
  });
}

/** The text layout for a report: colour and width when it goes to a terminal. */
export function textLayout(opts: { output?: string; color: boolean }): { style: Style; width: number } {
  const toTTY = !opts.output && process.stdout.isTTY;
  const color = !opts.output && wantColor(process.stdout.isTTY, process.env, opts.color);
  return { style: makeStyle(color), width: toTTY ? Math.max(60, Math.min(process.stdout.columns ?? 100, 120)) : 100 };
}

/** The report to --output (atomically, with a notice) or to stdout. */
export async function emit(opts: { output?: string; quiet?: boolean }, content: string): Promise<void> {
  if (opts.output) {
    await writeAtomic(opts.output, content);
    notice(opts, `report written to ${opts.output}`);
  } else await writeStdout(content);
}

/** The diagnostic page as SVG or PNG (by the file name). */
export async function writePlot(
  opts: { quiet?: boolean },
  path: string,
  title: string,
  d: Diagnostics,
  summary: FitSummary,
): Promise<void> {
  const svg = renderSvg({ title, rootogram: d.rootogram, fitted: d.fitted, residuals: d.residuals, summary });
  await writeAtomic(path, plotKind(path) === "svg" ? svg : svgToPng(svg));
  notice(opts, `picture written to ${path}`);
}
