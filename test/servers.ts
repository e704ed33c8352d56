// Real database servers for the tests, started here and stopped when the
// tests end (never mocked): a throw-away PostgreSQL cluster on a loopback
// port, and two ClickHouse servers as the shards of one cluster. When the server cannot start, the test that needs it fails with the
// reason; nothing skips itself.
import { type ChildProcess, execFileSync, spawn, spawnSync } from "node:child_process";
import { chownSync, existsSync, mkdtempSync, readdirSync, readFileSync, writeFileSync } from "node:fs";
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

/** A ClickHouse cluster of two servers on loopback ports, each one shard of the cluster "two_shards". */
export interface ClickHouseCluster {
  /** HTTP endpoints of the two servers (http://127.0.0.1:PORT/). */
  http: [string, string];
  /** The --db URL of the first server (the initiator of Distributed queries). */
  url: string;
  stop(): void;
}

/** Run SQL on a server over HTTP; throws with the server's message. */
export async function clickHouse(http: string, sql: string, body?: string): Promise<string> {
  const r = await fetch(body === undefined ? http : `${http}?query=${encodeURIComponent(sql)}`, {
    method: "POST",
    body: body ?? sql,
  });
  const text = await r.text();
  if (!r.ok) throw new Error(`ClickHouse: ${text.split("\n")[0]}`);
  return text;
}

/**
 * Start two clickhouse-server processes (Debian's clickhouse-server package;
 * .ci/run installs it when missing) with a remote_servers entry that names
 * both as the shards of "two_shards".
 */
export async function startClickHouseCluster(): Promise<ClickHouseCluster> {
  const server = spawnSync("sh", ["-c", "command -v clickhouse-server"], { encoding: "utf8" }).stdout.trim();
  if (!server)
    throw new Error("clickhouse-server is not installed (Debian: apt-get install clickhouse-server; .ci/run does)");
  const ports = await Promise.all([freePort(), freePort(), freePort(), freePort()]);
  const [http1, tcp1, http2, tcp2] = ports;
  const shards = [tcp1, tcp2]
    .map((p) => `<shard><replica><host>127.0.0.1</host><port>${p}</port></replica></shard>`)
    .join("");
  const children: ChildProcess[] = [];
  const dirs: string[] = [];
  for (const [http, tcp] of [
    [http1, tcp1],
    [http2, tcp2],
  ]) {
    const dir = mkdtempSync(join(tmpdir(), "tallyfit-ch-"));
    dirs.push(dir);
    const config = `<yandex>
  <logger><level>warning</level><log>${dir}/server.log</log><errorlog>${dir}/error.log</errorlog></logger>
  <http_port>${http}</http_port>
  <tcp_port>${tcp}</tcp_port>
  <listen_host>127.0.0.1</listen_host>
  <path>${dir}/data/</path>
  <tmp_path>${dir}/tmp/</tmp_path>
  <user_files_path>${dir}/user_files/</user_files_path>
  <users_config>/etc/clickhouse-server/users.xml</users_config>
  <default_profile>default</default_profile>
  <default_database>default</default_database>
  <mark_cache_size>268435456</mark_cache_size>
  <remote_servers><two_shards>${shards}</two_shards></remote_servers>
</yandex>
`;
    writeFileSync(join(dir, "config.xml"), config);
    children.push(spawn(server, [`--config-file=${join(dir, "config.xml")}`], { stdio: "ignore" }));
  }
  const stop = () => {
    for (const c of children) if (c.exitCode === null) c.kill("SIGKILL");
  };
  process.once("exit", stop);
  const endpoints: [string, string] = [`http://127.0.0.1:${http1}/`, `http://127.0.0.1:${http2}/`];
  for (const [k, e] of endpoints.entries()) {
    let ready = false;
    for (let t = 0; t < 120 && !ready; t++) {
      try {
        ready = (await clickHouse(e, "SELECT 1")).trim() === "1";
      } catch {
        await new Promise((r) => setTimeout(r, 250));
      }
    }
    if (!ready) {
      stop();
      const log = join(dirs[k], "error.log");
      throw new Error(
        `clickhouse-server ${k + 1} did not start: ${existsSync(log) ? readFileSync(log, "utf8").slice(-1500) : "no log"}`,
      );
    }
  }
  return { http: endpoints, url: `clickhouse://127.0.0.1:${http1}/default`, stop };
}
