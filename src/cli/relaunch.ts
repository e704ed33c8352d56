// Large inputs run in a child process with transparent huge pages for malloc
// (glibc's tunable glibc.malloc.hugetlb=1, glibc 2.35 and later), which the
// environment must carry from the start. Each column and row-length work
// array is fresh memory, first touched one page at a time; where the kernel
// grants huge pages only on request (transparent_hugepage "madvise"), a 4 KB
// page fault cost ~12 µs on the bench machine, so an 80 MB array cost 0.23 s
// to touch, against some 20 ms in 2 MB pages. The relaunch costs a Node start
// (~0.1 s), so it is made only for an input file of RELAUNCH_MIN_BYTES or more.
// This module imports nothing of the program: it runs before it is loaded.
import { spawn } from "node:child_process";
import { readFileSync, statSync } from "node:fs";

export const RELAUNCH_MIN_BYTES = 16 << 20;
const TUNABLE = "glibc.malloc.hugetlb=1";

export interface RelaunchContext {
  argv: string[];
  env: NodeJS.ProcessEnv;
  platform: string;
  /** The kernel's transparent_hugepage/enabled line ("always [madvise] never"), or "" when unknown. */
  hugePages: string;
  /** A path's size in bytes when it is a regular file, else −1. */
  fileSize: (path: string) => number;
  /** The runtime's glibc version ("2.36"), or null for another C library. */
  glibc: () => string | null;
}

/** The environment to relaunch with, or null when the process should run as it is. */
export function relaunchEnv(c: RelaunchContext): NodeJS.ProcessEnv | null {
  const given = c.env.GLIBC_TUNABLES ?? "";
  if (c.platform !== "linux" || c.env.TALLYFIT_HUGE_PAGES === "0" || given.includes("glibc.malloc.hugetlb"))
    return null;
  // "always": every large allocation already gets huge pages; "never": none can.
  if (!c.hugePages.includes("[madvise]")) return null;
  if (!c.argv.slice(2).some((a) => !a.startsWith("-") && c.fileSize(a) >= RELAUNCH_MIN_BYTES)) return null;
  const v = c.glibc()?.split(".").map(Number);
  if (!v || v[0] < 2 || (v[0] === 2 && v[1] < 35)) return null;
  return { ...c.env, GLIBC_TUNABLES: given ? `${given}:${TUNABLE}` : TUNABLE };
}

function fileSize(path: string): number {
  try {
    const s = statSync(path, { throwIfNoEntry: false });
    return s?.isFile() ? s.size : -1;
  } catch {
    return -1;
  }
}

function hugePages(): string {
  try {
    return readFileSync("/sys/kernel/mm/transparent_hugepage/enabled", "utf8");
  } catch {
    return "";
  }
}

function glibc(): string | null {
  const header = (process.report?.getReport() as { header?: { glibcVersionRuntime?: string } } | undefined)?.header;
  return header?.glibcVersionRuntime ?? null;
}

/**
 * Run this command again in a child with huge pages when relaunchEnv says so;
 * resolves true when it did (the exit code, or the signal, is the child's),
 * false when the caller should run the command itself.
 */
export function relaunchForHugePages(argv: string[]): Promise<boolean> {
  const env = relaunchEnv({
    argv,
    env: process.env,
    platform: process.platform,
    hugePages: hugePages(),
    fileSize,
    glibc,
  });
  if (env === null) return Promise.resolve(false);
  const child = spawn(process.execPath, [...process.execArgv, ...argv.slice(1)], { stdio: "inherit", env });
  const forward = (signal: NodeJS.Signals) => child.kill(signal);
  const signals: NodeJS.Signals[] = ["SIGINT", "SIGTERM", "SIGHUP"];
  for (const s of signals) process.on(s, forward);
  return new Promise((resolve) => {
    child.on("error", () => {
      for (const s of signals) process.off(s, forward);
      resolve(false);
    });
    child.on("exit", (code, signal) => {
      for (const s of signals) process.off(s, forward);
      if (signal) process.kill(process.pid, signal);
      else process.exitCode = code ?? 1;
      resolve(true);
    });
  });
}
