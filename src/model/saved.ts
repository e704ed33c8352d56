// The saved-model record (schema tallyfit.model/1): everything `predict` needs.

export interface SavedModel {
  schema: "tallyfit.model/1";
  tool: { name: "tallyfit"; version: string };
  data: { source: string; sha256: string; n_rows: number; n_used: number };
  family: "poisson" | "negbin" | "quasipoisson";
  link: "log";
  model: string;
  response: string;
  intercept: boolean;
  /** Terms as lists of variables, in model order. */
  terms: string[][];
  exposure: string | null;
  offset: string | null;
  /** Factor variables with their levels (natural order) and reference. */
  factors: { name: string; levels: string[]; reference: string }[];
  /** Numeric variables used by the terms. */
  numeric: string[];
  coefficients: { term: string; status: "estimated" | "aliased" | "no_events"; estimate: number | null }[];
  /** Model-based covariance (inverse Fisher information) of the estimated coefficients, original scale. */
  covariance: { terms: string[]; matrix: number[][] };
  /** Quasi-Poisson phi (1 otherwise); the covariance above is not yet multiplied by it. */
  dispersion_phi: number;
  alpha: number | null;
  alpha_std_error: number | null;
}

export const MODEL_SCHEMA = "tallyfit.model/1";
