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
    if (spare !== null) {
      const s = spare;
      spare = null;
      return s;
    }
    const r = Math.sqrt(-2 * Math.log(1 - u()));
    const th = 2 * Math.PI * u();
    spare = r * Math.sin(th);
    return r * Math.cos(th);
  };
}

// Samplers for seeded simulation (tests, the benchmark and the example generator).

/** Poisson draw by inversion, splitting means above 200 into halves (sums of Poissons are Poisson). */
export function poissonDraw(u: () => number, mean: number): number {
  if (mean > 200) return poissonDraw(u, mean / 2) + poissonDraw(u, mean / 2);
  let k = 0,
    p = Math.exp(-mean),
    s = p;
  const x = u();
  while (x > s && k < 100000) {
    k++;
    p *= mean / k;
    s += p;
  }
  return k;
}

/** Standard normal draw (Box and Muller 1958). */
export function normalDraw(u: () => number): number {
  return Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u());
}

/** Gamma(shape, 1) draw (Marsaglia and Tsang 2000). */
export function gammaDraw(u: () => number, shape: number): number {
  if (shape < 1) return gammaDraw(u, shape + 1) * u() ** (1 / shape);
  const d = shape - 1 / 3,
    c = 1 / Math.sqrt(9 * d);
  for (;;) {
    let x: number, v: number;
    do {
      x = normalDraw(u);
      v = 1 + c * x;
    } while (v <= 0);
    v = v * v * v;
    const w = u();
    if (w < 1 - 0.0331 * x ** 4 || Math.log(w) < 0.5 * x * x + d * (1 - v + Math.log(v))) return d * v;
  }
}

/** NB2 draw with mean mu and dispersion alpha, as a gamma–Poisson mixture. */
export function negbinDraw(u: () => number, mu: number, alpha: number): number {
  return alpha > 0 ? poissonDraw(u, mu * alpha * gammaDraw(u, 1 / alpha)) : poissonDraw(u, mu);
}
