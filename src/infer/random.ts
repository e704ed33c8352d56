// A small seeded generator so that every random part of tallyfit repeats exactly.

/** mulberry32 (a 32-bit generator by T. Ettinger, public domain): uniform on [0, 1). */
export function uniformGenerator(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Standard normal draws by the Box–Muller transform (Box and Muller 1958). */
export function normalGenerator(seed: number): () => number {
  const u = uniformGenerator(seed);
  let spare: number | null = null;
  return () => {
    if (spare !== null) { const s = spare; spare = null; return s; }
    const r = Math.sqrt(-2 * Math.log(1 - u()));
    const th = 2 * Math.PI * u();
    spare = r * Math.sin(th);
    return r * Math.cos(th);
  };
}
