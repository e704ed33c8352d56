// The inference plan's large arrays moved into shared memory before a worker
// gets the plan: a SharedArrayBuffer is shared by the structured clone that
// hands the plan over, not copied, so the second thread costs no second copy
// of the design and the fit (at 10 million rows, some 600 MB).

/** Arrays below this size are copied with the plan as before. */
export const SHARE_MIN_BYTES = 1 << 20;

type Typed = Float64Array | Float32Array | Int32Array | Uint32Array | Int16Array | Uint16Array | Int8Array | Uint8Array;

/**
 * Replace, in place throughout the object graph under root (plain objects,
 * arrays and Maps), each typed array of SHARE_MIN_BYTES or more by a copy in
 * a SharedArrayBuffer; an array reached twice gets one copy. Nothing in the
 * plan is written after the fit (no stage writes into its inputs), so the two
 * threads only read these. Frozen objects keep their arrays. Returns the
 * bytes moved.
 */
export function shareLargeArrays(root: unknown, minBytes = SHARE_MIN_BYTES): number {
  const seen = new Set<object>();
  const copies = new Map<ArrayBufferView, Typed>();
  let moved = 0;
  const visit = (v: unknown): unknown => {
    if (v === null || typeof v !== "object") return v;
    if (ArrayBuffer.isView(v)) {
      if (v instanceof DataView || v.buffer instanceof SharedArrayBuffer || v.byteLength < minBytes) return v;
      let c = copies.get(v);
      if (c === undefined) {
        const T = v.constructor as { new (b: SharedArrayBuffer): Typed };
        c = new T(new SharedArrayBuffer(v.byteLength));
        c.set(v as Typed);
        copies.set(v, c);
        moved += v.byteLength;
      }
      return c;
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
  return moved;
}
