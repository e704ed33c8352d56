// The model file (schema tallyfit.model/1): everything `predict` needs, as
// `fit --save-model` writes it; reading one, with clear errors for another
// schema or a damaged file.
import { readFileSync } from "node:fs";
import { readFile } from "node:fs/promises";
import { lazyModule } from "../math/lazy.js";
import { InputError } from "../errors.js";

export interface ModelFile {
  schema: "tallyfit.model/1";
  tool: { name: "tallyfit"; version: string };
  data: { source: string; sha256: string; n_rows: number; n_used: number };
  family: "poisson" | "negbin" | "quasipoisson" | "zip" | "zinb" | "hurdle-poisson" | "hurdle-negbin";
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
  coefficients: {
    term: string;
    status: "estimated" | "aliased" | "no_events";
    estimate: number | null;
    /**
     * For a level with no events: the upper profile-likelihood limit of its
     * coefficient (log scale) at upper_limit_level; predict uses it as the
     * largest rate the data allow (the estimate itself is −∞).
     */
    upper_limit?: number | null;
    upper_limit_level?: number;
  }[];
  /**
   * Covariance of the estimated coefficients, original scale: the inverse Fisher information (plain families),
   * the inverse observed information (excess-zero families), or a robust one (type). For the excess-zero
   * families it is joint: the count part's terms, then the zero part's (zero_terms), then log alpha.
   */
  covariance: {
    terms: string[];
    /** Excess-zero families: the zero part's estimated terms, drawn with the count part (none at its boundary). */
    zero_terms?: string[];
    /** Excess-zero NB2 forms: the last row and column are log alpha (false at alpha's boundary). */
    log_alpha?: boolean;
    matrix: number[][];
    /** Absent or "model": the inverse Fisher information; otherwise a cluster-robust covariance (already final). */
    type?:
      | "model"
      | "observed-information"
      | "robust-HC0"
      | "cluster-CR1"
      | "two-way-cluster-CR1"
      | "gee-independence-CR1"
      | "gee-exchangeable-CR1"
      | "gee-ar1-CR1";
    clusters?: { column: string; count: number }[];
  };
  /** Quasi-Poisson phi (1 otherwise); the covariance above is not yet multiplied by it. */
  dispersion_phi: number;
  alpha: number | null;
  alpha_std_error: number | null;
  /** Excess-zero families: the zero part, a logit model of a structural zero (zip, zinb) or of a non-zero count (hurdle). */
  zero_part?: ZeroPartFile;
  /** Calendar terms made from a date column (--date): predict makes them the same way for new rows. */
  calendar?: {
    column: string;
    /** The first and last dates among the rows fitted (YYYY-MM-DD); the trend counts years from the first. */
    first_date: string;
    last_date: string;
    trend: boolean;
    season: number;
    day_of_week: boolean;
  };
}

export interface ZeroPartFile {
  probability_of: "structural_zero" | "non_zero_count";
  model: string;
  intercept: boolean;
  terms: string[][];
  factors: { name: string; levels: string[]; reference: string }[];
  numeric: string[];
  coefficients: { term: string; status: "estimated"; estimate: number }[];
  /** No excess zeros (π → 0): the zero part is held at its estimates, which give π ≈ 0, and not drawn. */
  boundary: boolean;
}

/** The zero part as a model of its own (its terms over the same rows, without exposure), to build its design. */
export function zeroPartModel(saved: ModelFile): ModelFile | null {
  const z = saved.zero_part;
  if (!z) return null;
  return {
    ...saved,
    family: "poisson",
    model: z.model,
    intercept: z.intercept,
    terms: z.terms,
    factors: z.factors,
    numeric: z.numeric,
    coefficients: z.coefficients,
    exposure: null,
    offset: null,
    zero_part: undefined,
    calendar: undefined,
  };
}

export const ZERO_FAMILY_NAMES = ["zip", "zinb", "hurdle-poisson", "hurdle-negbin"] as const;

export const MODEL_FILE_SCHEMA = "tallyfit.model/1";

export function parseModelFile(text: string, source: string): ModelFile {
  let obj: unknown;
  try {
    obj = JSON.parse(text);
  } catch (e) {
    throw new InputError(
      `${source}: not a tallyfit model file (it is not valid JSON: ${(e as Error).message}). Write one with tallyfit fit --save-model.`,
    );
  }
  const m = obj as Partial<ModelFile> & { schema?: unknown };
  if (typeof m !== "object" || m === null || typeof m.schema !== "string")
    throw new InputError(
      `${source}: not a tallyfit model file (no "schema" field). Write one with tallyfit fit --save-model.`,
    );
  if (m.schema !== MODEL_FILE_SCHEMA)
    throw new InputError(
      `${source}: model file schema '${m.schema}' is not the one this version reads ('${MODEL_FILE_SCHEMA}'). Refit and save the model with this version of tallyfit.`,
    );
  for (const k of ["family", "model", "response", "terms", "factors", "numeric", "coefficients", "covariance"] as const)
    if (m[k] === undefined)
      throw new InputError(`${source}: the model file is incomplete (no "${k}"); refit and save it again.`);
  const damaged = schemaFault(m) ?? consistencyFault(m as ModelFile);
  if (damaged) throw new InputError(`${source}: the model file is damaged: ${damaged}; refit and save it again.`);
  return m as ModelFile;
}

// The model file's own JSON Schema (schemas/model-1.schema.json), checked by ajv, loaded on first use.
type Validate = ((data: unknown) => boolean) & { errors?: { instancePath: string; message?: string }[] | null };
const loadAjv = lazyModule<new (o: object) => { compile(s: object): Validate }>("ajv");
let validateModel: Validate | null = null;

/** The first place where the file breaks its JSON Schema, as "field: what is wrong", or null. */
function schemaFault(m: unknown): string | null {
  if (validateModel === null) {
    const Ajv = loadAjv();
    const schema = JSON.parse(readFileSync(new URL("../../../schemas/model-1.schema.json", import.meta.url), "utf8"));
    validateModel = new Ajv({ allErrors: false, strict: false }).compile(schema);
  }
  if (validateModel(m)) return null;
  const e = validateModel.errors?.[0];
  return `${e?.instancePath || "(top level)"} ${e?.message ?? "does not match the format"}`;
}

/** What the schema cannot say: the covariance matches the estimated coefficients, the numbers are usable. */
function consistencyFault(m: ModelFile): string | null {
  const estimated = m.coefficients.filter((c) => c.status === "estimated");
  for (const c of estimated)
    if (typeof c.estimate !== "number" || !Number.isFinite(c.estimate))
      return `/coefficients: '${c.term}' is estimated but its estimate is not a number`;
  if (m.covariance.terms.length !== estimated.length || m.covariance.terms.some((t, k) => t !== estimated[k].term))
    return "/covariance/terms do not match the estimated coefficients";
  const zeroFamily = (ZERO_FAMILY_NAMES as readonly string[]).includes(m.family);
  if (zeroFamily !== !!m.zero_part)
    return zeroFamily
      ? `/zero_part is missing for the family ${m.family}`
      : `/zero_part belongs to no ${m.family} model`;
  const zeroTerms = m.covariance.zero_terms ?? [];
  if (m.zero_part) {
    const drawn = m.zero_part.boundary ? [] : m.zero_part.coefficients.map((c) => c.term);
    if (zeroTerms.length !== drawn.length || zeroTerms.some((t, k) => t !== drawn[k]))
      return "/covariance/zero_terms do not match the zero part's coefficients";
    for (const c of m.zero_part.coefficients)
      if (!Number.isFinite(c.estimate)) return `/zero_part/coefficients: '${c.term}' has no usable estimate`;
  }
  if (m.covariance.log_alpha && !(m.family === "zinb" || m.family === "hurdle-negbin"))
    return "/covariance/log_alpha belongs to the NB2 forms only";
  const q = m.covariance.terms.length + zeroTerms.length + (m.covariance.log_alpha ? 1 : 0);
  if (m.covariance.matrix.length !== q || m.covariance.matrix.some((row) => row.length !== q))
    return `/covariance/matrix is not ${q} × ${q}`;
  for (let r = 0; r < q; r++)
    if (!(m.covariance.matrix[r][r] > 0))
      return `/covariance/matrix has a variance that is not positive (row ${r + 1})`;
  if (["negbin", "zinb", "hurdle-negbin"].includes(m.family) && !(typeof m.alpha === "number" && m.alpha >= 0))
    return "/alpha must be a number ≥ 0 for the negative binomial";
  if (!(m.dispersion_phi > 0)) return "/dispersion_phi must be positive";
  for (const f of m.factors)
    if (!f.levels.includes(f.reference))
      return `/factors: the reference '${f.reference}' is not a level of '${f.name}'`;
  return null;
}

export async function loadModelFile(path: string): Promise<ModelFile> {
  let text: string;
  try {
    text = await readFile(path, "utf8");
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    throw new InputError(`${path}: cannot read the model file (${code === "ENOENT" ? "no such file" : code}).`);
  }
  return parseModelFile(text, path);
}
