// Reading a saved model file, with clear errors for another schema or a damaged file.
import { readFile } from "node:fs/promises";
import { InputError } from "../errors.js";
import { MODEL_SCHEMA, type SavedModel } from "../model/saved.js";

export function parseSavedModel(text: string, source: string): SavedModel {
  let obj: unknown;
  try { obj = JSON.parse(text); } catch (e) {
    throw new InputError(`${source}: not a tallyfit model file (it is not valid JSON: ${(e as Error).message}). Write one with tallyfit fit --save-model.`);
  }
  const m = obj as Partial<SavedModel> & { schema?: unknown };
  if (typeof m !== "object" || m === null || typeof m.schema !== "string")
    throw new InputError(`${source}: not a tallyfit model file (no "schema" field). Write one with tallyfit fit --save-model.`);
  if (m.schema !== MODEL_SCHEMA)
    throw new InputError(`${source}: model file schema '${m.schema}' is not the one this version reads ('${MODEL_SCHEMA}'). Refit and save the model with this version of tallyfit.`);
  for (const k of ["family", "model", "response", "terms", "factors", "numeric", "coefficients", "covariance"] as const)
    if (m[k] === undefined) throw new InputError(`${source}: the model file is incomplete (no "${k}"); refit and save it again.`);
  return m as SavedModel;
}

export async function loadSavedModel(path: string): Promise<SavedModel> {
  let text: string;
  try { text = await readFile(path, "utf8"); } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    throw new InputError(`${path}: cannot read the model file (${code === "ENOENT" ? "no such file" : code}).`);
  }
  return parseSavedModel(text, path);
}
