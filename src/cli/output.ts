// Writing results without ever destroying an earlier file: write a temporary
// file in the same folder, then rename it into place (atomic on POSIX).
import { randomBytes } from "node:crypto";
import { rename, unlink, writeFile } from "node:fs/promises";
import { basename, dirname, join } from "node:path";
import { InputError } from "../errors.js";

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
