// One IRLS pass over a range of rows, as a message a thread can run on the
// arrays of a registered context: the same function computes both halves of a
// split pass whichever thread runs them (pass-team.ts), so the sums, added in
// row order of the halves, do not depend on where they ran.
import type { CellLayout, ScaledValues } from "./layout.js";
import { type CellSums, cellSums } from "./cross-products.js";
import { totalDeviance } from "./deviance.js";
import { predictCellsNegbin, predictCellsPoisson } from "./passes.js";

/** The row-length arrays of one fit (shared memory when another thread reads them) and its layout. */
export interface PassContext {
  L: CellLayout;
  vals: (ScaledValues | null)[];
  off: Float64Array;
  y: Float64Array;
  counts: Int32Array;
  inFit: Uint8Array;
  pw: Float64Array | null;
  eta: Float64Array;
  mu: Float64Array;
}

/** The per-count tables of the current alpha (see CountTable), and the NB2 joint pass's tables when wanted. */
export interface PassTablesAt {
  alpha: number;
  ylogy: Float64Array;
  negbinDeviance: Float64Array;
  want: boolean;
  d: Float64Array;
  e: Float64Array;
  lgammaTerms: Float64Array;
}

export type PassMessage =
  | { kind: "predict"; betaS: Float64Array; tables: PassTablesAt; from: number; to: number }
  | { kind: "sums"; alpha: number; withResponse: boolean; from: number; to: number }
  | { kind: "deviance"; tables: PassTablesAt; from: number; to: number };

export interface PassReply {
  /** predict, deviance: the deviance over the range (2·Σ). */
  d?: number;
  /** predict with NB2: the five alpha sums and the log-likelihood over the range. */
  out?: Float64Array;
  sums?: CellSums;
}

export function runPass(c: PassContext, m: PassMessage): PassReply {
  if (m.kind === "sums")
    return {
      sums: cellSums(
        c.vals,
        c.L,
        m.from,
        m.to,
        { mu: c.mu, eta: c.eta, off: c.off, y: c.y, pw: c.pw, alpha: m.alpha, withResponse: m.withResponse },
        null,
      ),
    };
  const t = m.tables;
  const tab = { counts: c.counts, ylogy: t.ylogy, negbinDeviance: t.negbinDeviance };
  if (m.kind === "deviance") return { d: totalDeviance(c.y, c.mu, c.eta, c.pw, c.inFit, t.alpha, tab, m.from, m.to) };
  if (t.alpha === 0)
    return { d: predictCellsPoisson(c.L, c.vals, m.betaS, c.off, c.eta, c.mu, c.pw, tab, m.from, m.to) };
  const out = new Float64Array(6);
  const sums = { alpha: t.alpha, want: t.want, d: t.d, e: t.e, lgammaTerms: t.lgammaTerms, out };
  const d = predictCellsNegbin(c.L, c.vals, m.betaS, c.off, c.eta, c.mu, c.pw, t.alpha, tab, sums, m.from, m.to);
  return { d, out };
}
