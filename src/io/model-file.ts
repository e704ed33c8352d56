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
  /** Model-based covariance (inverse Fisher information) of the estimated coefficients, original scale. */
  covariance: {
    terms: string[];
    matrix: number[][];
    /** Absent or "model": the inverse Fisher information; otherwise a cluster-robust covariance (already final). */
    type?:
      | "model"
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
  const q = m.covariance.terms.length;
  if (q !== estimated.length || m.covariance.terms.some((t, k) => t !== estimated[k].term))
    return "/covariance/terms do not match the estimated coefficients";
  if (m.covariance.matrix.length !== q || m.covariance.matrix.some((row) => row.length !== q))
    return `/covariance/matrix is not ${q} × ${q}`;
  for (let r = 0; r < q; r++)
    if (!(m.covariance.matrix[r][r] > 0))
      return `/covariance/matrix has a variance that is not positive (row ${r + 1})`;
  if (m.family === "negbin" && !(typeof m.alpha === "number" && m.alpha >= 0))
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
