// A run's files, written all or nothing: every output is first written to a
// temporary file beside its target, and only when all of them are written are
// they renamed into place; a failure removes the temporary files and leaves
// every earlier file as it was. A target that is not a regular file (a device
// such as /dev/stdout, or a named pipe) is written in place, never replaced.
// The input file and two outputs with the same target are refused.
import { randomBytes } from "node:crypto";
import { realpathSync, statSync } from "node:fs";
import { rename, unlink, writeFile } from "node:fs/promises";
import { basename, dirname, join, resolve } from "node:path";
import { InputError } from "../errors.js";

interface Pending {
  path: string;
  option: string;
  content: string | Uint8Array;
}

/** Where a path leads: the real path of an existing target, else its resolved path in the real folder. */
function targetOf(path: string): string {
  try {
    return realpathSync(path);
  } catch {
    try {
      return join(realpathSync(dirname(resolve(path))), basename(path));
    } catch {
      return resolve(path);
    }
  }
}

function isRegularOrMissing(path: string): boolean {
  try {
    return statSync(path).isFile();
  } catch {
    return true;
  }
}

function reason(e: unknown): string {
  const code = (e as NodeJS.ErrnoException).code;
  return code === "ENOENT"
    ? "the folder does not exist"
    : code === "EACCES" || code === "EPERM"
      ? "permission denied"
      : code === "ENOSPC"
        ? "the disk is full"
        : code === "EISDIR"
          ? "it is a folder"
          : String(code ?? e);
}

export class RunOutputs {
  private readonly pending: Pending[] = [];
  /** Targets claimed so far (real path → the option that named it). */
  private readonly claimed = new Map<string, string>();

  /** inputs: the files the run reads (never overwritten). */
  constructor(private readonly inputs: string[] = []) {}

  /** Check a target before any work: not an input, not named twice. */
  claim(path: string, option: string): void {
    const target = targetOf(path);
    for (const input of this.inputs)
      if (input !== "-" && targetOf(input) === target)
        throw new InputError(`${option} ${path} is the input file; write the output somewhere else.`);
    const twice = this.claimed.get(target);
    if (twice) throw new InputError(`${option} and ${twice} name the same file (${path}); give each its own file.`);
    this.claimed.set(target, option);
  }

  /** Queue a file (claimed earlier); nothing is written until commit. */
  add(path: string, option: string, content: string | Uint8Array): void {
    this.pending.push({ path, option, content });
  }

  /** The files written by commit, with what each is. */
  written(): [string, string][] {
    const what: Record<string, string> = { "--output": "report", "--save-model": "model", "--plot": "picture" };
    return this.pending.map((p) => [p.path, what[p.option] ?? "output"]);
  }

  /** Write every queued file, or none. */
  async commit(): Promise<void> {
    const temps: { tmp: string; path: string }[] = [];
    try {
      for (const p of this.pending) {
        if (!isRegularOrMissing(p.path)) continue;
        const tmp = join(dirname(p.path), `.${basename(p.path)}.tmp-${process.pid}-${randomBytes(4).toString("hex")}`);
        temps.push({ tmp, path: p.path });
        await writeFile(tmp, p.content, { flag: "wx" }).catch((e) => {
          throw new InputError(`cannot write ${p.path} (${reason(e)}); no output of this run was written.`);
        });
      }
      // Devices and pipes are written in place (a rename would replace the device node).
      for (const p of this.pending)
        if (!isRegularOrMissing(p.path))
          await writeFile(p.path, p.content).catch((e) => {
            throw new InputError(
              `cannot write ${p.path} (${reason(e)}); the other outputs of this run were not written.`,
            );
          });
    } catch (e) {
      await Promise.all(temps.map((t) => unlink(t.tmp).catch(() => undefined)));
      throw e;
    }
    for (const t of temps) await rename(t.tmp, t.path);
  }
}
