// The options of `tallyfit fit`, as commander hands them over.
import type { ModelOptions } from "../options.js";

export type FitCliOptions = ModelOptions & {
  family: string;
  level: string;
  intervals?: string;
  cluster: string[];
  gee?: string;
  orderBy?: string;
  alpha: string;
  saveModel?: string;
  summaryBy?: string;
  per: string;
  ratioPer: string[];
  baselineAt: string[];
  zeroTerms?: string;
};
