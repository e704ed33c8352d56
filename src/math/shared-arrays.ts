// Typed arrays in shared memory (SharedArrayBuffer), which a structured clone
// hands to another thread without copying: for the row-length arrays that two
// threads read and write in turn (the IRLS passes split by row range).

type Typed = Float64Array | Float32Array | Int32Array | Uint32Array | Int16Array | Uint16Array | Int8Array | Uint8Array;

/**
 * Row-length arrays of this many elements or more are born in shared memory
 * (rowArray), so that splitting a pass between threads needs no copy of them.
 */
export const SHARED_MIN_ROWS = 200000;

/** A zero-filled typed array of n elements: in shared memory from SHARED_MIN_ROWS elements. */
export function rowArray<T extends Typed>(
  Kind: { new (n: number): T; new (b: SharedArrayBuffer): T; BYTES_PER_ELEMENT: number },
  n: number,
): T {
  return n >= SHARED_MIN_ROWS ? new Kind(new SharedArrayBuffer(n * Kind.BYTES_PER_ELEMENT)) : new Kind(n);
}

/** A zero-filled Float64Array of n elements in shared memory. */
export function sharedFloat64(n: number): Float64Array {
  return new Float64Array(new SharedArrayBuffer(n * 8));
}

/** Whether a typed array's memory is shared. */
export function isShared(a: ArrayBufferView): boolean {
  return a.buffer instanceof SharedArrayBuffer;
}

const copies = new WeakMap<Typed, Typed>();

/** The array itself when its memory is shared, else a copy in shared memory (made once per array). */
export function inSharedMemory<T extends Typed>(a: T): T {
  if (isShared(a)) return a;
  let c = copies.get(a) as T | undefined;
  if (c === undefined) {
    const T = a.constructor as { new (b: SharedArrayBuffer): T };
    c = new T(new SharedArrayBuffer(a.byteLength));
    c.set(a as never);
    copies.set(a, c);
  }
  return c;
}
