// collectGarbage (src/math/collect.ts): a dropped array is collected at once,
// which a run of numeric loops does not otherwise get from V8 in time.
import { test } from "node:test";
import assert from "node:assert/strict";
import { setTimeout as sleep } from "node:timers/promises";
import { collectGarbage } from "../../src/math/collect.js";

test("collectGarbage collects a dropped array at once and gives its memory back, without a gc in the program's own global scope", async () => {
  let collected = 0;
  const registry = new FinalizationRegistry(() => collected++);
  collectGarbage();
  const before = process.memoryUsage().arrayBuffers;
  // A small array, which no allocation pressure would collect by itself, and a large one in shared memory.
  (() => {
    registry.register(new Float64Array(16), 0);
    const big = new Float64Array(new SharedArrayBuffer(64 << 20));
    big[big.length - 1] = 1;
    registry.register(big, 1);
    assert.ok(process.memoryUsage().arrayBuffers - before >= 60 << 20, "the large array is counted while it lives");
  })();
  collectGarbage();
  await sleep(20);
  assert.equal(collected, 2, "both arrays were collected");
  // The large array's memory is released by V8's sweeper, soon after the collection.
  for (let k = 0; k < 50 && process.memoryUsage().arrayBuffers - before >= 8 << 20; k++) await sleep(20);
  assert.ok(process.memoryUsage().arrayBuffers - before < 8 << 20, "its memory is given back");
  assert.equal(typeof (globalThis as { gc?: unknown }).gc, "undefined");
});
