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
// Keys are hashed (FNV-1a over their 32-bit words) into an open-addressing table.
import { denseGrouping } from "./dense-patterns.js";
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

/**
 * The key of each row as a few doubles: the factor slots' columns combined
 * into one integer in mixed radix (exact below 2^53), then each distinct
 * numeric array (values, and for the NB also the offset and the count).
 */
function rowKeys(
  design: Design,
  by: PatternKey,
): { factorKey: Float64Array | null; radix: number; numeric: Float64Array[] } | null {
  const n = design.n;
  const factorSlots = design.matrix.slots.filter((s) => s.cols !== null);
  let factorKey: Float64Array | null = null;
  let radix = 1;
  if (factorSlots.length > 0) {
    factorKey = new Float64Array(n);
    for (const s of factorSlots) {
      const cols = s.cols!,
        start = s.colStart;
      for (let i = 0; i < n; i++) {
        const c = cols[i];
        factorKey[i] += (c < 0 ? 0 : c - start + 1) * radix;
      }
      radix *= s.colCount + 1;
      if (radix > 2 ** 53) return null;
    }
  }
  return { factorKey, radix, numeric: numericKeys(design, by) };
}

/** The numeric arrays of a row's key, each once: slot values, and for the NB also the offset and the count. */
function numericKeys(design: Design, by: PatternKey): Float64Array[] {
  const numeric: Float64Array[] = [];
  const add = (a: Float64Array | null) => {
    if (a !== null && !numeric.includes(a)) numeric.push(a);
  };
  for (const s of design.matrix.slots) add(s.values);
  if (by !== "covariates") {
    add(design.offset);
    add(design.y);
  }
  return numeric;
}

/**
 * An estimate of the number of patterns from an evenly spread sample of m
 * rows: with d distinct keys among them, the P that solves
 * d = P(1 − e^(−m/P)), the expected count of distinct values when m draws
 * fall on P equally likely patterns (the classical occupancy problem;
 * Feller, An Introduction to Probability Theory, vol. 1, §IV.2). Uneven
 * frequencies make it an underestimate, so it is used only to skip a merge
 * that cannot pay (Infinity: every sampled row was distinct).
 */
export function estimatePatterns(design: Design, by: PatternKey, sample = 20000): number {
  const n = design.n;
  // The key of rowKeys, with each factor slot's columns read directly, only at the sampled rows.
  const cols: (Float64Array | Int32Array)[] = [
    ...design.matrix.slots.flatMap((sl) => (sl.cols ? [sl.cols] : [])),
    ...numericKeys(design, by),
  ];
  const m = Math.min(n, sample);
  // Keys by a 53-bit hash of their words (two FNV-1a variants): a collision among 20,000 keys has odds near 1e-8.
  const seen = new Set<number>();
  const bits = new Float64Array(1),
    words = new Int32Array(bits.buffer);
  for (let k = 0; k < m; k++) {
    const i = Math.floor((k * n) / m);
    let h1 = -2128831035,
      h2 = 0x12345678;
    for (const c of cols) {
      bits[0] = c[i];
      h1 = Math.imul(h1 ^ words[0], 16777619);
      h1 = Math.imul(h1 ^ words[1], 16777619);
      h2 = Math.imul(h2 ^ words[1], 0x01000193 ^ 0x5bd1e995);
      h2 = Math.imul(h2 ^ words[0], 0x5bd1e995);
    }
    seen.add((h1 >>> 0) * 2097152 + ((h2 >>> 11) & 0x1fffff));
  }
  const d = seen.size;
  if (m === n) return d;
  if (d >= m) return Infinity;
  let lo = d,
    hi = 1e15;
  for (let it = 0; it < 200 && hi - lo > 1e-9 * hi; it++) {
    const mid = 0.5 * (lo + hi);
    if (mid * -Math.expm1(-m / mid) < d) lo = mid;
    else hi = mid;
  }
  return hi;
}

/** Copied keys per round of the partitioned grouping stay within this many bytes. */
const ROUND_BYTES = 64 << 20;

/**
 * Group the design's rows by pattern. Returns null when there would be more
 * than `maxPatterns` patterns (the search stops as soon as it knows).
 * The rows are first hashed (FNV-1a over the 32-bit words of their keys,
 * with the murmur3 finaliser) and partitioned by the top bits of the hash,
 * the keys copied next to each other; each partition is then grouped with a
 * small open-addressing table that stays in cache. Patterns are numbered in
 * the order of their first row, which is their representative.
 */
export function mergePatterns(
  design: Design,
  by: PatternKey,
  maxPatterns = design.n,
  /** "hash" skips the array lookup of few-valued keys (the tests compare both ways). */
  grouping: "auto" | "hash" = "auto",
): PatternMerge | null {
  const n = design.n;
  const keys = rowKeys(design, by);
  if (keys === null) return null;
  // Few key values: one array lookup per row (dense-patterns.ts).
  const dense = grouping === "auto" ? denseGrouping(n, keys.factorKey, keys.radix, keys.numeric, maxPatterns) : null;
  if (dense === "too many") return null;
  if (dense !== null)
    return {
      by,
      design: patternDesign(design, by, dense.pattern, dense.reps),
      pattern: dense.pattern,
      rows: n,
      patterns: dense.count,
    };
  const cols = keys.factorKey ? [keys.factorKey, ...keys.numeric] : keys.numeric;
  const K = cols.length;

  // 1. Row hashes, column by column.
  const hash = new Int32Array(n).fill(-2128831035);
  const bits = new Float64Array(1),
    words = new Int32Array(bits.buffer);
  for (const col of cols)
    for (let i = 0; i < n; i++) {
      bits[0] = col[i];
      let h = hash[i];
      h = Math.imul(h ^ words[0], 16777619);
      hash[i] = Math.imul(h ^ words[1], 16777619);
    }
  for (let i = 0; i < n; i++) {
    let h = hash[i];
    h ^= h >>> 16;
    h = Math.imul(h, 0x85ebca6b);
    h ^= h >>> 13;
    h = Math.imul(h, 0xc2b2ae35);
    h ^= h >>> 16;
    hash[i] = h;
  }

  // 2. Partitions by the top bits of the hash (about 1,000 rows each).
  const pbits = Math.max(0, Math.min(12, Math.ceil(Math.log2(n / 1024))));
  const B = 1 << pbits;
  const part = (h: number) => (pbits === 0 ? 0 : h >>> (32 - pbits));
  const size = new Int32Array(B);
  for (let i = 0; i < n; i++) size[part(hash[i])]++;

  const pattern = new Int32Array(n);
  const reps: number[] = [];
  let patKeys = new Float64Array(1024 * K);
  let count = 0;
  let table = new Int32Array(64);
  // 3. Rounds of consecutive partitions whose copied keys fit in ROUND_BYTES.
  for (let b0 = 0; b0 < B; ) {
    let b1 = b0,
      rows = 0;
    while (b1 < B && (b1 === b0 || (rows + size[b1]) * (K + 2) * 8 <= ROUND_BYTES)) rows += size[b1++];
    const start = new Int32Array(b1 - b0 + 1);
    for (let b = b0; b < b1; b++) start[b - b0 + 1] = start[b - b0] + size[b];
    const next = start.slice(0, b1 - b0);
    const rowOf = new Int32Array(rows),
      hashOf = new Int32Array(rows),
      keyOf = new Float64Array(rows * K);
    for (let i = 0; i < n; i++) {
      const h = hash[i],
        b = part(h);
      if (b < b0 || b >= b1) continue;
      const at = next[b - b0]++;
      rowOf[at] = i;
      hashOf[at] = h;
      for (let k = 0; k < K; k++) keyOf[at * K + k] = cols[k][i];
    }
    for (let b = b0; b < b1; b++) {
      const lo = start[b - b0],
        hi = start[b - b0 + 1];
      let cap = 16;
      while (cap < 2 * (hi - lo)) cap *= 2;
      if (table.length < cap) table = new Int32Array(cap);
      table.fill(-1, 0, cap);
      for (let at = lo; at < hi; at++) {
        const h = hashOf[at];
        let slot = h & (cap - 1),
          id = -1;
        for (;;) {
          const t = table[slot];
          if (t < 0) break;
          let k = 0;
          while (k < K && patKeys[t * K + k] === keyOf[at * K + k]) k++;
          if (k === K) {
            id = t;
            break;
          }
          slot = (slot + 1) & (cap - 1);
        }
        if (id < 0) {
          if (count >= maxPatterns) return null;
          id = count++;
          if ((id + 1) * K > patKeys.length) {
            const pk = new Float64Array(patKeys.length * 2);
            pk.set(patKeys);
            patKeys = pk;
          }
          for (let k = 0; k < K; k++) patKeys[id * K + k] = keyOf[at * K + k];
          reps.push(rowOf[at]);
          table[slot] = id;
        }
        pattern[rowOf[at]] = id;
      }
    }
    b0 = b1;
  }
  // 4. Number the patterns in order of their first row, so the representatives are read in file order.
  const first = Int32Array.from(reps).sort();
  const renumber = new Int32Array(count);
  for (let j = 0; j < count; j++) renumber[pattern[first[j]]] = j;
  for (let i = 0; i < n; i++) pattern[i] = renumber[pattern[i]];
  return { by, design: patternDesign(design, by, pattern, first), pattern, rows: n, patterns: count };
}

/** The one-row-per-pattern design: covariates of a representative row, summed counts and exposures or weights. */
function patternDesign(design: Design, by: PatternKey, pattern: Int32Array, reps: Int32Array): Design {
  const P = reps.length;
  const n = design.n;
  const pw = design.weights;
  const pickF = (a: Float64Array) => {
    const o = new Float64Array(P);
    for (let p = 0; p < P; p++) o[p] = a[reps[p]];
    return o;
  };
  const pickI = (a: Int32Array) => {
    const o = new Int32Array(P);
    for (let p = 0; p < P; p++) o[p] = a[reps[p]];
    return o;
  };
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
    for (let i = 0; i < n; i++) {
      const p = pattern[i];
      y[p] += (pw ? pw[i] : 1) * design.y[i];
      if (design.offset[i] > top[p]) top[p] = design.offset[i];
    }
    const sum = new Float64Array(P);
    for (let i = 0; i < n; i++) {
      const p = pattern[i];
      sum[p] += (pw ? pw[i] : 1) * Math.exp(design.offset[i] - top[p]);
    }
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
    y,
    offset,
    weights,
    exposure,
    matrix: { ...design.matrix, n: P, slots },
  };
}

/** The key a family's fit may merge by: the Poisson likelihood (and so quasi-Poisson) by covariates, the NB2 also by offset and count. */
export function patternKeyFor(family: "poisson" | "quasipoisson" | "negbin"): PatternKey {
  return family === "negbin" ? "covariates, offset and count" : "covariates";
}
