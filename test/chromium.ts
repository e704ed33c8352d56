// Headless Chromium for the page tests (Debian's chromium package, which
// .ci/run installs when it is missing): the DOM as Chromium parsed it, a
// screenshot, and the page's own network requests from Chromium's net log.
// A test that needs it fails when it is missing; none skips itself.
import assert from "node:assert/strict";
import { spawnSync } from "node:child_process";
import { mkdtempSync, readFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { inflateSync } from "node:zlib";

const FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking", "--hide-scrollbars"];

function chromium(args: string[]): string {
  const profile = mkdtempSync(join(tmpdir(), "tallyfit-chromium-"));
  const r = spawnSync("chromium", [...FLAGS, `--user-data-dir=${profile}`, ...args], {
    encoding: "utf8",
    timeout: 90_000,
    maxBuffer: 64 * 1024 * 1024,
  });
  if (r.error)
    assert.fail(
      `chromium could not be run (${(r.error as NodeJS.ErrnoException).code}): install Debian's chromium package (.ci/run does)`,
    );
  assert.equal(r.status, 0, `chromium exited with ${r.status}: ${r.stderr.slice(-500)}`);
  return r.stdout;
}

/** The page's DOM after Chromium has parsed it, serialized. */
export function dumpDom(file: string): string {
  return chromium(["--dump-dom", `file://${file}`]);
}

/** A screenshot of the top of the page (PNG file). */
export function screenshot(file: string, png: string, size = "1200,1600"): void {
  chromium([`--window-size=${size}`, `--screenshot=${png}`, `file://${file}`]);
}

/**
 * The URLs the page itself asked for while loading, from Chromium's net log:
 * requests whose initiator is the page (a file page's origin is "null"), not
 * the browser's own background requests ("not an origin").
 */
export function pageRequests(file: string): string[] {
  const log = join(mkdtempSync(join(tmpdir(), "tallyfit-netlog-")), "net.json");
  chromium([`--log-net-log=${log}`, "--dump-dom", `file://${file}`]);
  const net = JSON.parse(readFileSync(log, "utf8")) as {
    constants: { logEventTypes: Record<string, number> };
    events: { type: number; params?: { url?: string; initiator?: string } }[];
  };
  const start = net.constants.logEventTypes.URL_REQUEST_START_JOB;
  return net.events
    .filter((e) => e.type === start && e.params?.url && e.params.initiator !== "not an origin")
    .map((e) => e.params!.url!);
}

/** Pixels of an 8-bit RGB or RGBA PNG without interlacing (Chromium's screenshots), as [r, g, b] per pixel. */
export function pngPixels(file: string): { width: number; height: number; rgb: Uint8Array } {
  const buf = readFileSync(file);
  let pos = 8;
  let width = 0,
    height = 0,
    channels = 0;
  const idat: Buffer[] = [];
  while (pos < buf.length) {
    const len = buf.readUInt32BE(pos);
    const type = buf.toString("latin1", pos + 4, pos + 8);
    const data = buf.subarray(pos + 8, pos + 8 + len);
    if (type === "IHDR") {
      width = data.readUInt32BE(0);
      height = data.readUInt32BE(4);
      assert.equal(data[8], 8, "8-bit PNG");
      channels = data[9] === 6 ? 4 : data[9] === 2 ? 3 : 0;
      assert.ok(channels > 0 && data[12] === 0, "RGB(A), not interlaced");
    } else if (type === "IDAT") idat.push(data);
    pos += 12 + len;
  }
  const raw = inflateSync(Buffer.concat(idat));
  const stride = width * channels;
  const out = new Uint8Array(width * height * channels);
  for (let y = 0; y < height; y++) {
    const filter = raw[y * (stride + 1)];
    for (let x = 0; x < stride; x++) {
      const v = raw[y * (stride + 1) + 1 + x];
      const a = x >= channels ? out[y * stride + x - channels] : 0;
      const b = y > 0 ? out[(y - 1) * stride + x] : 0;
      const c = x >= channels && y > 0 ? out[(y - 1) * stride + x - channels] : 0;
      const p = a + b - c;
      const pred =
        filter === 0
          ? 0
          : filter === 1
            ? a
            : filter === 2
              ? b
              : filter === 3
                ? (a + b) >> 1
                : Math.abs(p - a) <= Math.abs(p - b) && Math.abs(p - a) <= Math.abs(p - c)
                  ? a
                  : Math.abs(p - b) <= Math.abs(p - c)
                    ? b
                    : c;
      out[y * stride + x] = (v + pred) & 255;
    }
  }
  const rgb = new Uint8Array(width * height * 3);
  for (let i = 0; i < width * height; i++) for (let k = 0; k < 3; k++) rgb[i * 3 + k] = out[i * channels + k];
  return { width, height, rgb };
}
