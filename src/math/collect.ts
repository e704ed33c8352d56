// Garbage collection at the end of a stage of a large run. A dropped typed
// array's memory (in shared memory or not) goes back to the system only when
// V8 collects the small object that holds it, and V8's incremental collector
// advances in tasks and allocation steps that long numeric loops over a few
// large arrays seldom give it: at 10M rows (NB2, bench data), the reader's and
// the first fits' dropped arrays were still mapped when the term tests
// allocated theirs, a peak of 1.52 GB against 1.14 GB with a collection after
// reading, after the design and after the fit (some 7 ms each).
import { setFlagsFromString } from "node:v8";
import { runInNewContext } from "node:vm";
import { SHARED_MIN_ROWS } from "./shared-arrays.js";

let gc: (() => void) | null | undefined;

/**
 * A full collection of this thread's heap, where V8 lets a program ask for one
 * (else nothing). The V8 flag it sets only puts a gc function into contexts
 * created after it, as the one made here; the program's own are unchanged.
 */
export function collectGarbage(): void {
  if (gc === undefined) {
    gc = null;
    try {
      setFlagsFromString("--expose-gc");
      const f: unknown = runInNewContext("gc");
      if (typeof f === "function") gc = f as () => void;
    } catch {
      // No collection on request: V8 collects in its own time.
    }
  }
  gc?.();
}

/** collectGarbage after a stage over this many rows, when they are many (row-length arrays of megabytes). */
export function collectAfterStage(rows: number): void {
  if (rows >= SHARED_MIN_ROWS) collectGarbage();
}
