// The inference plan's large arrays moved into shared memory before a worker
// gets the plan: a SharedArrayBuffer is shared by the structured clone that
// hands the plan over, not copied, so the second thread costs no second copy
// of the design and the fit. Most row-length arrays are born shared (rowArray);
// this moves the rest.
import { inSharedMemory, isShared } from "../math/shared-arrays.js";

/** Arrays below this size are copied with the plan as before. */
export const SHARE_MIN_BYTES = 1 << 20;

/**
 * Replace, in place throughout the object graph under root (plain objects,
 * arrays and Maps), each typed array of SHARE_MIN_BYTES or more by a copy in
 * a SharedArrayBuffer (inSharedMemory: an array reached twice, or already
 * copied for the IRLS passes, has one copy). Nothing in the
 * plan is written after the fit (no stage writes into its inputs), so the two
 * threads only read these. Frozen objects keep their arrays. Returns the
 * bytes moved.
 */
export function shareLargeArrays(root: unknown, minBytes = SHARE_MIN_BYTES): number {
  const seen = new Set<object>();
  const moved = new Set<ArrayBufferView>();
  const visit = (v: unknown): unknown => {
    if (v === null || typeof v !== "object") return v;
    if (ArrayBuffer.isView(v)) {
      if (v instanceof DataView || isShared(v) || v.byteLength < minBytes) return v;
      moved.add(v);
      return inSharedMemory(v as Float64Array);
    }
    if (seen.has(v)) return v;
    seen.add(v);
    // A frozen object's own arrays cannot be replaced: leave them (the clone copies them), look further down.
    const frozen = Object.isFrozen(v);
    const step = (x: unknown) => (frozen && ArrayBuffer.isView(x) ? x : visit(x));
    if (Array.isArray(v)) {
      for (let i = 0; i < v.length; i++) {
        const r = step(v[i]);
        if (r !== v[i] && !frozen) v[i] = r;
      }
    } else if (v instanceof Map) {
      for (const [k, x] of v) {
        const r = step(x);
        if (r !== x && !frozen) v.set(k, r);
      }
    } else if (!(v instanceof Set)) {
      const o = v as Record<string, unknown>;
      for (const key of Object.keys(o)) {
        const x = o[key];
        const r = step(x);
        if (r !== x && !frozen) o[key] = r;
      }
    }
    return v;
  };
  visit(root);
  let bytes = 0;
  for (const a of moved) bytes += a.byteLength;
  return bytes;
}
