// Real database servers for the tests, started here and stopped when the
// tests end (never mocked): a throw-away PostgreSQL cluster on a loopback
// port. When the server cannot start, the test that needs it fails with the
// reason; nothing skips itself.
import { execFileSync, spawnSync } from "node:child_process";
import { chownSync, existsSync, mkdtempSync, readdirSync, readFileSync } from "node:fs";
import { createServer } from "node:net";
import { tmpdir } from "node:os";
import { join } from "node:path";

/** A free loopback port (the kernel's choice). */
export function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const s = createServer();
    s.once("error", reject);
    s.listen(0, "127.0.0.1", () => {
      const port = (s.address() as { port: number }).port;
      s.close(() => resolve(port));
    });
  });
}

/** A PostgreSQL program: on PATH, or in Debian's /usr/lib/postgresql/VERSION/bin. */
function pgProgram(name: string): string {
  const onPath = spawnSync("sh", ["-c", `command -v ${name}`], { encoding: "utf8" }).stdout.trim();
  if (onPath) return onPath;
  const base = "/usr/lib/postgresql";
  if (existsSync(base))
    for (const v of readdirSync(base).sort().reverse()) {
      const p = join(base, v, "bin", name);
      if (existsSync(p)) return p;
    }
  throw new Error(`PostgreSQL's ${name} is not installed (Debian: apt-get install postgresql; .ci/run does)`);
}

export interface Server {
  url: string;
  stop(): void;
}

/** Start a throw-away PostgreSQL cluster (initdb and pg_ctl run as the postgres user when the tests run as root). */
export async function startPostgres(): Promise<Server> {
  const initdb = pgProgram("initdb");
  const pgCtl = pgProgram("pg_ctl");
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-pg-"));
  const data = join(dir, "data");
  const root = process.getuid?.() === 0;
  const asOwner = (program: string, args: string[]) => {
    if (!root) return execFileSync(program, args, { stdio: "pipe" });
    const quoted = [program, ...args].map((a) => `'${a.replace(/'/g, "'\\''")}'`).join(" ");
    return execFileSync("su", ["postgres", "-s", "/bin/sh", "-c", quoted], { stdio: "pipe" });
  };
  if (root) {
    const uid = Number(execFileSync("id", ["-u", "postgres"]).toString().trim());
    const gid = Number(execFileSync("id", ["-g", "postgres"]).toString().trim());
    chownSync(dir, uid, gid);
  }
  const port = await freePort();
  try {
    asOwner(initdb, ["-D", data, "-U", "postgres", "-A", "trust", "--no-sync"]);
    asOwner(pgCtl, [
      "-D",
      data,
      "-l",
      join(dir, "server.log"),
      "-w",
      "-t",
      "60",
      "-o",
      `-p ${port} -k ${dir} -c listen_addresses=127.0.0.1 -c fsync=off`,
      "start",
    ]);
  } catch (e) {
    const log = existsSync(join(dir, "server.log")) ? readFileSync(join(dir, "server.log"), "utf8").slice(-2000) : "";
    throw new Error(`PostgreSQL did not start: ${(e as { stderr?: Buffer }).stderr?.toString() ?? e}\n${log}`);
  }
  let stopped = false;
  const stop = () => {
    if (stopped) return;
    stopped = true;
    try {
      asOwner(pgCtl, ["-D", data, "-m", "immediate", "-w", "stop"]);
    } catch {
      // Already gone.
    }
  };
  process.once("exit", stop);
  return { url: `postgres://postgres@127.0.0.1:${port}/postgres`, stop };
}
