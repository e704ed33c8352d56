// The job file of `tallyfit run` (schema tallyfit.job/1): one file that
// describes fit → check → predict → outputs, in YAML (for people) or JSON
// (both read by the yaml package, YAML 1.2 being a superset of JSON), checked
// against schemas/job-1.schema.json with every fault located by line and
// column in the file.
import { readFileSync } from "node:fs";
import { InputError } from "../errors.js";
import { lazyModule } from "../math/lazy.js";

export interface JobFile {
  schema: "tallyfit.job/1";
  data: string;
  model: string;
  exposure?: string;
  offset?: string;
  weights?: string;
  family?: "poisson" | "negbin" | "quasipoisson" | "zip" | "zinb" | "hurdle-poisson" | "hurdle-negbin" | "auto";
  /** The zero part's terms of a zero-inflated or hurdle family. */
  zero_terms?: string;
  design?: {
    factor?: string[];
    ref?: Record<string, string>;
    order?: Record<string, string[]>;
    date?: string;
    trend?: boolean;
    season?: number;
    day_of_week?: boolean;
    na?: string;
    delimiter?: string;
    no_intercept?: boolean;
  };
  fit?: {
    level?: number;
    intervals?: "wald" | "profile" | "both";
    cluster?: string[];
    robust?: boolean;
    ratio_per?: Record<string, number>;
    baseline_at?: Record<string, number>;
  };
  check?: {
    run?: boolean;
    family?: "poisson" | "negbin" | "quasipoisson" | "zip" | "zinb" | "hurdle-poisson" | "hurdle-negbin";
    cluster?: string;
    order_by?: string;
    alpha?: number;
    fail_on_flag?: boolean;
  };
  predict?: {
    data: string;
    flag_by?: string[];
    flag_level?: number;
    adjust?: "none" | "holm" | "bh";
    skip_bad_rows?: boolean;
    id?: string[];
    max_model_age?: number;
    draws?: number;
    seed?: number;
    fail_on_flag?: "rows" | "groups" | "any" | "none";
  };
  outputs: {
    dir: string;
    report?: "text" | "json" | "markdown" | "html";
    predictions?: "csv" | "json" | "text" | "markdown" | "html";
  };
}

export const JOB_FILE_SCHEMA = "tallyfit.job/1";

type YamlModule = typeof import("yaml");
const loadYaml = lazyModule<YamlModule>("yaml");
type Validate = ((data: unknown) => boolean) & {
  errors?: { instancePath: string; message?: string; params?: Record<string, unknown> }[] | null;
};
const loadAjv = lazyModule<new (o: object) => { compile(s: object): Validate }>("ajv");
let validateJob: Validate | null = null;

/** "line L, column C" of a character offset. */
function place(text: string, offset: number): string {
  const before = text.slice(0, Math.max(0, offset));
  const line = before.split("\n").length;
  const column = offset - before.lastIndexOf("\n");
  return `line ${line}, column ${column}`;
}

/** Parse and check a job file's text; every fault names the file, its line and column, and the field. */
export function parseJobFile(text: string, source: string): JobFile {
  const YAML = loadYaml();
  const doc = YAML.parseDocument(text, { prettyErrors: false, uniqueKeys: true });
  if (doc.errors.length) {
    const e = doc.errors[0];
    throw new InputError(
      `${source}, ${place(text, e.pos[0])}: the job file cannot be read (${e.message.split("\n")[0]}).`,
    );
  }
  const job = doc.toJS({ maxAliasCount: 50 }) as unknown;
  if (typeof job !== "object" || job === null || Array.isArray(job))
    throw new InputError(
      `${source}: a job file is a mapping of fields (schema: ${JOB_FILE_SCHEMA}, data, model, outputs, …).`,
    );
  if (validateJob === null) {
    const Ajv = loadAjv();
    const schema = JSON.parse(readFileSync(new URL("../../../schemas/job-1.schema.json", import.meta.url), "utf8"));
    validateJob = new Ajv({ allErrors: false, strict: false }).compile(schema);
  }
  if (!validateJob(job)) {
    const e = validateJob.errors![0];
    const path = e.instancePath.split("/").filter(Boolean);
    const extra = typeof e.params?.additionalProperty === "string" ? e.params.additionalProperty : null;
    const at = extra ? [...path, extra] : path;
    // The node the fault is at (an unknown field: its key), for its line and column.
    const node = (at.length ? doc.getIn(at, true) : doc.contents) as { range?: [number, number] } | undefined;
    let offset = node?.range?.[0];
    if (extra) {
      const parent = doc.getIn(path, true) as
        | { items?: { key: { value?: unknown; range?: [number, number] } }[] }
        | undefined;
      offset = parent?.items?.find((p) => p.key?.value === extra)?.key.range?.[0] ?? offset;
    }
    const field = at.length ? at.join(".") : "(top level)";
    const what = extra
      ? "is not a field of a job file (a typo?)"
      : e.params?.allowedValues
        ? `must be one of ${(e.params.allowedValues as unknown[]).join(", ")}`
        : e.params?.allowedValue !== undefined
          ? `must be '${String(e.params.allowedValue)}'`
          : e.params?.missingProperty
            ? `needs the field '${String(e.params.missingProperty)}'`
            : (e.message ?? "does not match the job format");
    throw new InputError(`${source}${offset !== undefined ? `, ${place(text, offset)}` : ""}: ${field} ${what}.`);
  }
  return job as JobFile;
}

export function loadJobFile(path: string): JobFile {
  let text: string;
  try {
    text = readFileSync(path, "utf8");
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    throw new InputError(
      `${path}: the job file cannot be read (${code === "ENOENT" ? "no such file" : String(code ?? e)}).`,
    );
  }
  return parseJobFile(text, path);
}
