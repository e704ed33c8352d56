// A factor's level index (src/io/level-index.ts) against a Map from the
// level's text to its code: codes in order of first appearance, whatever the
// levels' lengths (the short-level table on one side of 6 bytes, the hashed
// map on the other) and however many levels make the table grow.
import { test } from "node:test";
import assert from "node:assert/strict";
import fc from "fast-check";
import { codeOfBytes, codeOfString, emptyLevelIndex } from "../../src/io/level-index.js";

test("codes are the order of first appearance, as a Map gives them (fast-check, 100 runs)", () => {
  const level = fc.oneof(
    fc.string({ maxLength: 3 }),
    fc.stringMatching(/^[a-z0-9]{0,9}$/),
    fc.integer({ min: 0, max: 5000 }).map(String),
  );
  fc.assert(
    fc.property(fc.array(level, { maxLength: 3000, size: "max" }), (levels) => {
      const ix = emptyLevelIndex();
      const reference = new Map<string, number>();
      const encoder = new TextEncoder();
      for (const t of levels) {
        if (!reference.has(t)) reference.set(t, reference.size);
        // The bytes inside a longer buffer, as the reader sees a field.
        const bytes = encoder.encode(`,${t},`);
        assert.equal(codeOfBytes(ix, bytes, 1, bytes.length - 1), reference.get(t), JSON.stringify(t));
        assert.equal(codeOfString(ix, t), reference.get(t));
      }
      assert.deepEqual(ix.levels, [...reference.keys()]);
    }),
    { numRuns: 100, seed: 31 },
  );
});

test("a level's bytes are kept as a copy: refilling the buffer they came from changes no level", () => {
  const ix = emptyLevelIndex();
  const buf = Buffer.from("north,south-east ward");
  assert.equal(codeOfBytes(ix, buf, 0, 5), 0);
  assert.equal(codeOfBytes(ix, buf, 6, buf.length), 1);
  buf.fill(0x78);
  assert.equal(codeOfString(ix, "north"), 0);
  assert.equal(codeOfString(ix, "south-east ward"), 1);
  assert.equal(codeOfString(ix, "xxxxx"), 2);
  assert.deepEqual(ix.levels, ["north", "south-east ward", "xxxxx"]);
});
