// The shape of src/ that DEVELOPERS.md promises: data flows one way through the
// stages, general numerics sit on a floor that imports no stage, no import
// cycles, and no source file over 500 lines.
import assert from "node:assert/strict";
import { readdirSync, readFileSync, statSync } from "node:fs";
import { dirname, join, relative, resolve } from "node:path";
import { test } from "node:test";
import { ROOT } from "../helpers.js";

const SRC = join(ROOT, "src");
/** Stages from the floor up: a module may import its own stage or any stage below it. */
const LAYERS = ["math", "errors", "io", "formula", "design", "fit", "infer", "report", "analysis", "cli", "index"];

function sources(dir: string): string[] {
  return readdirSync(dir).flatMap((name) => {
    const p = join(dir, name);
    return statSync(p).isDirectory() ? sources(p) : p.endsWith(".ts") ? [p] : [];
  });
}

/** Relative imports of a file (static, re-exports and dynamic), as repository paths of .ts files. */
function importsOf(file: string): string[] {
  const text = readFileSync(file, "utf8");
  const specs = [...text.matchAll(/(?:from\s+|import\(\s*|import\s+)"(\.{1,2}\/[^"]+)"/g)].map((m) => m[1]);
  return specs.map((s) => resolve(dirname(file), s).replace(/\.js$/, ".ts"));
}

function layerOf(file: string): string {
  const first = relative(SRC, file).split("/")[0].replace(/\.ts$/, "");
  return first;
}

const files = sources(SRC);
const graph = new Map(files.map((f) => [f, importsOf(f)]));

test("every relative import in src/ names a file that exists", () => {
  for (const [f, deps] of graph) for (const d of deps) assert.ok(graph.has(d), `${relative(ROOT, f)} imports ${d}`);
});

test("no import cycle among src/ files (Tarjan's strongly connected components)", () => {
  let index = 0;
  const idx = new Map<string, number>();
  const low = new Map<string, number>();
  const stack: string[] = [];
  const on = new Set<string>();
  const cycles: string[][] = [];
  const visit = (v: string) => {
    idx.set(v, index);
    low.set(v, index++);
    stack.push(v);
    on.add(v);
    for (const w of graph.get(v) ?? []) {
      if (!idx.has(w)) {
        visit(w);
        low.set(v, Math.min(low.get(v)!, low.get(w)!));
      } else if (on.has(w)) low.set(v, Math.min(low.get(v)!, idx.get(w)!));
    }
    if (low.get(v) === idx.get(v)) {
      const comp: string[] = [];
      let w: string;
      do {
        w = stack.pop()!;
        on.delete(w);
        comp.push(relative(ROOT, w));
      } while (w !== v);
      if (comp.length > 1 || (graph.get(v) ?? []).includes(v)) cycles.push(comp);
    }
  };
  for (const f of files) if (!idx.has(f)) visit(f);
  assert.deepEqual(cycles, []);
});

test("imports run down the stages only: math imports no stage, no stage imports a later one", () => {
  const wrong: string[] = [];
  for (const [f, deps] of graph) {
    const from = LAYERS.indexOf(layerOf(f));
    assert.ok(from >= 0, `${relative(ROOT, f)} is in no known stage`);
    for (const d of deps) {
      const to = LAYERS.indexOf(layerOf(d));
      if (to > from) wrong.push(`${relative(ROOT, f)} → ${relative(ROOT, d)}`);
    }
  }
  assert.deepEqual(wrong, []);
});

test("no file in src/ is over 500 lines", () => {
  const long = files
    .map((f) => ({ f: relative(ROOT, f), lines: readFileSync(f, "utf8").split("\n").length - 1 }))
    .filter((x) => x.lines > 500);
  assert.deepEqual(long, []);
});
