// Moving a plan's large arrays into shared memory (src/infer/shared-plan.ts):
// values unchanged, one copy for an array reached twice, small arrays and
// frozen objects left alone, and a structured clone then shares, not copies.
import { test } from "node:test";
import assert from "node:assert/strict";
import { MessageChannel, receiveMessageOnPort } from "node:worker_threads";
import { shareLargeArrays } from "../../src/infer/shared-plan.js";

test("large typed arrays move to shared memory in place, once each, with their values", () => {
  const big = Float64Array.from({ length: 300 }, (_, i) => i / 7);
  const codes = Int32Array.from({ length: 300 }, (_, i) => i % 5);
  const small = new Float64Array(3).fill(2);
  const frozen = Object.freeze({ keep: Float64Array.from(big) });
  const plan = {
    design: { y: big, cols: [codes, null], again: big, small },
    byName: new Map([["y", big]]),
    frozen,
    label: "x",
  };
  const moved = shareLargeArrays(plan, 1000);
  assert.equal(moved, big.byteLength + codes.byteLength);
  assert.ok(plan.design.y.buffer instanceof SharedArrayBuffer);
  assert.ok(plan.design.cols[0]!.buffer instanceof SharedArrayBuffer);
  assert.equal(plan.design.y, plan.design.again);
  assert.equal(plan.byName.get("y"), plan.design.y);
  assert.deepEqual([...plan.design.y], [...big]);
  assert.deepEqual([...plan.design.cols[0]!], [...codes]);
  assert.ok(plan.design.cols[0] instanceof Int32Array);
  assert.equal(plan.design.small, small);
  assert.equal(plan.frozen.keep.buffer instanceof SharedArrayBuffer, false);
  assert.equal(shareLargeArrays(plan, 1000), 0, "a second call has nothing left to move");
});

test("a structured clone of the shared plan shares its arrays with the receiver", () => {
  const plan = { y: new Float64Array(1000).fill(1) };
  shareLargeArrays(plan, 1000);
  const { port1, port2 } = new MessageChannel();
  port1.postMessage(plan);
  const got = receiveMessageOnPort(port2)!.message as typeof plan;
  plan.y[5] = 42;
  assert.equal(got.y[5], 42);
  port1.close();
});
