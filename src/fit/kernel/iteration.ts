// The per-iteration passes of one IRLS fit, bound to its layout: the new
// linear predictor, means and deviance after a step, and X'WX, X'Wz at the
// current means. Alpha, its count tables and the joint pass's sums change
// together when the NB2 alpha moves (setAlpha).
import type { DesignMatrix } from "../../design/design.js";
import type { SymMatrix } from "../../math/linalg.js";
import { CountTable, countIndex } from "../count-table.js";
import { alphaDerivativesFromSums } from "../family.js";
import { inSharedMemory } from "../../math/shared-arrays.js";
import {
  addCellSums,
  assembleCellSums,
  crossProductsCells,
  crossProductsCompiled,
  workingValues,
} from "./cross-products.js";
import { totalDeviance } from "./deviance.js";
import type { CellLayout, CompiledSlot, ScaledValues } from "./layout.js";
import {
  type AlphaSums,
  alphaSumsAt,
  expInto,
  linearPredictor,
  linearPredictorCells,
  predictCellsNegbin,
  predictCellsPoisson,
} from "./passes.js";
import type { PassContext, PassMessage, PassReply, PassTablesAt } from "./pass-range.js";
import { passSplit, releasePassContext, splitPass } from "./pass-team.js";
import { cellsOf, compiledOf, slotValuesOf } from "./setup.js";
import type { FitData, FitSetup } from "./types.js";

/** The Poisson's stand-in for the NB2-only table in a pass message. */
const NO_TABLE = new Float64Array(0);

export class IrlsPasses {
  alpha: number;
  /** True when alpha's score sums come out of the same pass as the deviance (joint NB2 estimation on cells). */
  readonly joint: boolean;
  private table: CountTable | null;
  private sums: AlphaSums;
  private readonly cells: CellLayout | null;
  private readonly vals: (ScaledValues | null)[];
  private readonly compiled: CompiledSlot[] | null;
  // Working weights and responses are stored only on the row-by-row path; the cells compute them as they go.
  private readonly w: Float64Array | null;
  private readonly z: Float64Array | null;
  /** Where each pass is split between two threads (0: it is not; see pass-team.ts). */
  private readonly half: number;
  private local: PassContext | null = null;
  private shared: PassContext | null = null;

  constructor(
    m: DesignMatrix,
    private readonly setup: FitSetup,
    private readonly data: FitData,
    /** The offset, with any fixed coefficients' contributions added. */
    private readonly off: Float64Array,
    alpha: number,
    wantJoint: boolean,
  ) {
    this.alpha = alpha;
    this.cells = cellsOf(m, setup);
    this.vals = slotValuesOf(m, setup);
    this.compiled = this.cells ? null : compiledOf(m, setup);
    this.joint = wantJoint && this.cells !== null && countIndex(data.y) !== null && alpha > 0;
    this.table = CountTable.of(data.y, alpha);
    this.sums = alphaSumsAt(this.table, alpha, this.joint);
    this.w = this.cells ? null : new Float64Array(m.n);
    this.z = this.cells ? null : new Float64Array(m.n);
    this.half = this.cells && this.table ? passSplit(m.n) : 0;
  }

  /** eta = offset + X·beta' (scaled coordinates), −∞ for rows out of the fit. */
  private linearPredictor(betaS: Float64Array, eta: Float64Array): void {
    if (this.cells) linearPredictorCells(this.cells, this.vals, betaS, this.off, eta);
    else linearPredictor(this.compiled!, this.setup.inFit, betaS, this.off, eta);
  }

  /** New eta and mu at betaS, written over the given arrays, and the deviance there. */
  evaluate(betaS: Float64Array, eta: Float64Array, mu: Float64Array): number {
    const { cells, table, alpha } = this;
    const pw = this.data.weights;
    if (cells && table && this.half > 0) {
      const tables = this.tablesAt();
      const [a, b] = this.split(eta, mu, (from, to) => ({ kind: "predict", betaS, tables, from, to }));
      if (alpha !== 0) for (let k = 0; k < 6; k++) this.sums.out[k] = a.out![k] + b.out![k];
      return a.d! + b.d!;
    }
    if (cells && table)
      return alpha === 0
        ? predictCellsPoisson(cells, this.vals, betaS, this.off, eta, mu, pw, table)
        : predictCellsNegbin(cells, this.vals, betaS, this.off, eta, mu, pw, alpha, table, this.sums);
    this.linearPredictor(betaS, eta);
    expInto(eta, this.setup.inFit, mu);
    return this.deviance(eta, mu);
  }

  /** The deviance at the current alpha, given eta and mu. */
  deviance(eta: Float64Array, mu: Float64Array): number {
    if (this.cells && this.table && this.half > 0) {
      const tables = this.tablesAt();
      const [a, b] = this.split(eta, mu, (from, to) => ({ kind: "deviance", tables, from, to }));
      return a.d! + b.d!;
    }
    return totalDeviance(this.data.y, mu, eta, this.data.weights, this.setup.inFit, this.alpha, this.table);
  }

  /** X'WX and X'Wz at the current means: working weight mu/V(mu) (log link: dmu/deta = mu) and working response. */
  crossProducts(eta: Float64Array, mu: Float64Array, withResponse: boolean): { a: SymMatrix; b: Float64Array } {
    const { y, weights: pw } = this.data;
    const n = mu.length,
      q = this.setup.order.length,
      alpha = this.alpha;
    if (this.cells && this.table && this.half > 0) {
      const [first, second] = this.split(eta, mu, (from, to) => ({ kind: "sums", alpha, withResponse, from, to }));
      addCellSums(first.sums!, second.sums!);
      return assembleCellSums(this.vals, this.cells, q, first.sums!);
    }
    if (this.cells)
      return crossProductsCells(
        this.vals,
        this.cells,
        n,
        q,
        { mu, eta, off: this.off, y, pw, alpha, withResponse },
        null,
      );
    workingValues(n, this.setup.inFit, mu, eta, this.off, y, pw, alpha, this.w!, this.z!);
    return crossProductsCompiled(this.compiled!, n, q, this.w!, withResponse ? this.z : null);
  }

  /** Alpha's score and curvature from the last pass, when it accumulated them at the current alpha. */
  alphaDerivatives(): { g: number; h: number } | null {
    return this.joint && this.sums.alpha === this.alpha ? alphaDerivativesFromSums(this.sums.out, this.alpha) : null;
  }

  /** The NB2 log-likelihood the last pass accumulated at the current alpha (joint passes only). */
  logLikAtAlpha(): number | null {
    return this.joint && this.sums.alpha === this.alpha ? this.sums.out[5] : null;
  }

  /** The count tables of the current alpha, as a split pass's message carries them. */
  private tablesAt(): PassTablesAt {
    const t = this.table!,
      s = this.sums,
      alpha = this.alpha;
    return {
      alpha,
      ylogy: t.ylogy,
      negbinDeviance: alpha === 0 ? NO_TABLE : t.negbinDeviance,
      want: s.want,
      d: s.d,
      e: s.e,
      lgammaTerms: s.lgammaTerms,
    };
  }

  /** Both halves of a pass (see pass-team.ts) over this fit's arrays and the given eta and mu. */
  private split(
    eta: Float64Array,
    mu: Float64Array,
    message: (from: number, to: number) => PassMessage,
  ): [PassReply, PassReply] {
    if (this.local?.eta !== eta || this.local.mu !== mu) {
      const { y, weights: pw } = this.data;
      this.local = {
        L: this.cells!,
        vals: this.vals,
        off: this.off,
        y,
        counts: this.table!.counts,
        inFit: this.setup.inFit,
        pw,
        eta,
        mu,
      };
      this.shared = null;
    }
    const local = this.local;
    const shared = () => {
      if (this.shared === null) {
        const L = this.cells!;
        this.shared = {
          L: { ...L, cell: inSharedMemory(L.cell) },
          vals: this.vals.map((v) => (v === null ? null : { ...v, raw: inSharedMemory(v.raw) })),
          off: inSharedMemory(local.off),
          y: inSharedMemory(local.y),
          counts: inSharedMemory(local.counts),
          inFit: inSharedMemory(local.inFit),
          pw: local.pw === null ? null : inSharedMemory(local.pw),
          eta,
          mu,
        };
      }
      return this.shared;
    };
    return splitPass(this, local, shared, message, this.half, eta.length);
  }

  /** The helper thread no longer needs this fit's arrays. */
  release(): void {
    releasePassContext(this);
  }

  /** Move to another alpha: its count tables, and fresh sums for the joint pass. */
  setAlpha(alpha: number): void {
    this.alpha = alpha;
    this.table = CountTable.of(this.data.y, alpha);
    if (this.joint) this.sums = alphaSumsAt(this.table, alpha, true, this.sums.out);
  }
}
