// Merging rows that share a covariate pattern, so that IRLS runs over one row
// per pattern instead of one per record. Both merges leave the likelihood
// equations unchanged:
//  - Poisson ("covariates"): rows with the same design row x share the mean
//    exp(x'b)·E_i, so the pattern's counts and exposures add up
//    (Y = Σ w·y, E = Σ w·E_i): Σ_i w(y_i − mu_i)x = (Y − exp(x'b)·E)x, and the
//    log-likelihood changes only by a term free of b. The per-row deviance
//    and Pearson statistics are computed afterwards on the rows themselves.
//  - Negative binomial ("covariates, offset and count"): the NB2 likelihood
//    is not a function of the pattern sums, so only rows that also share the
//    offset and the count are merged, each pattern a frequency-weighted row
//    (weight = Σ w). That is exact for every statistic.
// Hashing is FNV-1a over the key columns' 32-bit words, with open addressing.
import type { Design, Slot } from "./design.js";

export type PatternKey = "covariates" | "covariates, offset and count";

export interface PatternMerge {
  by: PatternKey;
  /** One row per pattern: the design the IRLS iterations run on. */
  design: Design;
  /** The pattern of each row of the original design. */
  pattern: Int32Array;
  rows: number;
  patterns: number;
}

/** The 32-bit words of a typed array, for hashing and exact comparison. */
function words(a: Float64Array | Int32Array): Int32Array {
  return a instanceof Int32Array ? a : new Int32Array(a.buffer, a.byteOffset, a.length * 2);
}

/**
 * Group the design's rows by pattern. Returns null when there would be more
 * than `maxPatterns` patterns (the search stops as soon as it knows).
 */
export function mergePatterns(design: Design, by: PatternKey, maxPatterns = design.n): PatternMerge | null {
  const n = design.n;
  const keys: { w: Int32Array; stride: number }[] = [];
  const seen = new Set<unknown>();
  const add = (a: Float64Array | Int32Array | null) => {
    if (a === null || seen.has(a)) return;
    seen.add(a);
    keys.push({ w: words(a), stride: a instanceof Int32Array ? 1 : 2 });
  };
  for (const s of design.matrix.slots) { add(s.cols); add(s.values); }
  if (by !== "covariates") { add(design.offset); add(design.y); }

  // Row hashes, column by column (FNV-1a on each 32-bit word).
  const hash = new Int32Array(n).fill(-2128831035);
  for (const { w, stride } of keys)
    for (let i = 0; i < n; i++) {
      let h = hash[i];
      for (let k = 0; k < stride; k++) h = Math.imul(h ^ w[i * stride + k], 16777619);
      hash[i] = h;
    }

  let cap = 1 << 12;
  let table = new Int32Array(cap).fill(-1);
  let reps = new Int32Array(1 << 10);
  let repHash = new Int32Array(1 << 10);
  let count = 0;
  const pattern = new Int32Array(n);
  const same = (i: number, j: number): boolean => {
    for (const { w, stride } of keys)
      for (let k = 0; k < stride; k++) if (w[i * stride + k] !== w[j * stride + k]) return false;
    return true;
  };
  for (let i = 0; i < n; i++) {
    const h = hash[i];
    let slot = (h ^ (h >>> 15)) & (cap - 1);
    let id = -1;
    for (;;) {
      const t = table[slot];
      if (t < 0) break;
      if (repHash[t] === h && same(reps[t], i)) { id = t; break; }
      slot = (slot + 1) & (cap - 1);
    }
    if (id < 0) {
      if (count >= maxPatterns) return null;
      id = count++;
      if (id >= reps.length) {
        const r = new Int32Array(reps.length * 2); r.set(reps); reps = r;
        const rh = new Int32Array(repHash.length * 2); rh.set(repHash); repHash = rh;
      }
      reps[id] = i;
      repHash[id] = h;
      table[slot] = id;
      if (count * 2 > cap) {
        // Grow and re-insert every pattern by its stored hash.
        cap *= 2;
        table = new Int32Array(cap).fill(-1);
        for (let t = 0; t < count; t++) {
          const g = repHash[t];
          let s = (g ^ (g >>> 15)) & (cap - 1);
          while (table[s] >= 0) s = (s + 1) & (cap - 1);
          table[s] = t;
        }
      }
    }
    pattern[i] = id;
  }
  return { by, design: patternDesign(design, by, pattern, reps.subarray(0, count)), pattern, rows: n, patterns: count };
}

/** The one-row-per-pattern design: covariates of a representative row, summed counts and exposures or weights. */
function patternDesign(design: Design, by: PatternKey, pattern: Int32Array, reps: Int32Array): Design {
  const P = reps.length;
  const n = design.n;
  const pw = design.weights;
  const pickF = (a: Float64Array) => { const o = new Float64Array(P); for (let p = 0; p < P; p++) o[p] = a[reps[p]]; return o; };
  const pickI = (a: Int32Array) => { const o = new Int32Array(P); for (let p = 0; p < P; p++) o[p] = a[reps[p]]; return o; };
  const shared = new Map<unknown, Float64Array | Int32Array>();
  const once = <T extends Float64Array | Int32Array>(a: T, f: (a: T) => T): T => {
    if (!shared.has(a)) shared.set(a, f(a));
    return shared.get(a) as T;
  };
  const slots: Slot[] = design.matrix.slots.map((s) => ({
    ...s,
    cols: s.cols === null ? null : once(s.cols, pickI),
    values: s.values === null ? null : once(s.values, pickF),
  }));
  let y: Float64Array, offset: Float64Array, weights: Float64Array | null, exposure: Float64Array | null;
  if (by === "covariates") {
    // Y = Σ w·y; log E = log Σ w·exp(offset), by log-sum-exp so large offsets cannot overflow.
    y = new Float64Array(P);
    const top = new Float64Array(P).fill(-Infinity);
    for (let i = 0; i < n; i++) { const p = pattern[i]; y[p] += (pw ? pw[i] : 1) * design.y[i]; if (design.offset[i] > top[p]) top[p] = design.offset[i]; }
    const sum = new Float64Array(P);
    for (let i = 0; i < n; i++) { const p = pattern[i]; sum[p] += (pw ? pw[i] : 1) * Math.exp(design.offset[i] - top[p]); }
    offset = new Float64Array(P);
    for (let p = 0; p < P; p++) offset[p] = top[p] + Math.log(sum[p]);
    weights = null;
    exposure = null;
    if (design.exposure) {
      exposure = new Float64Array(P);
      for (let i = 0; i < n; i++) exposure[pattern[i]] += (pw ? pw[i] : 1) * design.exposure[i];
    }
  } else {
    y = pickF(design.y);
    offset = pickF(design.offset);
    weights = new Float64Array(P);
    for (let i = 0; i < n; i++) weights[pattern[i]] += pw ? pw[i] : 1;
    exposure = design.exposure ? pickF(design.exposure) : null;
  }
  return {
    ...design,
    n: P,
    rowIndex: pickI(design.rowIndex),
    y, offset, weights, exposure,
    matrix: { ...design.matrix, n: P, slots },
  };
}

/** The key a family's fit may merge by: the Poisson likelihood (and so quasi-Poisson) by covariates, the NB2 also by offset and count. */
export function patternKeyFor(family: "poisson" | "quasipoisson" | "negbin"): PatternKey {
  return family === "negbin" ? "covariates, offset and count" : "covariates";
}
