// The model string: "COUNT ~ TERMS" in Wilkinson and Rogers' notation
// (Applied Statistics 22, 1973) restricted to the operators +, : and *,
// with parentheses for grouping and 1 for the intercept.
import { InputError } from "../errors.js";

/** One model term: the variables it multiplies, in the order first written. */
export interface Term {
  variables: string[];
}

export interface Formula {
  text: string;
  response: string;
  /** Terms other than the intercept, ordered by degree, then by first appearance. */
  terms: Term[];
  intercept: boolean;
}

type Tok = { kind: "name" | "op" | "one" | "end"; value: string; pos: number };

/** Limits that keep parsing bounded in time and memory; each refusal says which was reached. */
export const FORMULA_LIMITS = { length: 10_000, nesting: 100, terms: 1_000 } as const;

function fail(text: string, pos: number, what: string): never {
  // A long model string is shown as a window around the fault, so the message stays short.
  const from = Math.max(0, pos - 40);
  const to = Math.min(text.length, pos + 40);
  const shown = `${from > 0 ? "…" : ""}${text.slice(from, to)}${to < text.length ? "…" : ""}`;
  const caret = `${" ".repeat(Math.max(0, pos - from + (from > 0 ? 1 : 0)))}^`;
  throw new InputError(`--model: ${what}\n  ${shown}\n  ${caret}`);
}

const NAME = /[A-Za-z_.][A-Za-z0-9_.]*/y;
const NUMBER = /\d+(?:\.\d*)?/y;

function tokenize(text: string): Tok[] {
  if (text.length > FORMULA_LIMITS.length)
    fail(text, FORMULA_LIMITS.length, `the model string is longer than ${FORMULA_LIMITS.length} characters`);
  const toks: Tok[] = [];
  let i = 0;
  while (i < text.length) {
    const c = text[i];
    if (c === " " || c === "\t") {
      i++;
      continue;
    }
    if ("~+:*()".includes(c)) {
      toks.push({ kind: "op", value: c, pos: i });
      i++;
      continue;
    }
    if (c === "`") {
      const end = text.indexOf("`", i + 1);
      if (end < 0) fail(text, i, "this backquote is never closed");
      if (end === i + 1) fail(text, i, "empty column name between backquotes");
      toks.push({ kind: "name", value: text.slice(i + 1, end), pos: i });
      i = end + 1;
      continue;
    }
    NAME.lastIndex = i;
    const m = NAME.exec(text);
    if (m) {
      toks.push({ kind: "name", value: m[0], pos: i });
      i += m[0].length;
      continue;
    }
    NUMBER.lastIndex = i;
    const num = NUMBER.exec(text);
    if (num) {
      if (num[0] === "1") {
        toks.push({ kind: "one", value: "1", pos: i });
        i += 1;
        continue;
      }
      fail(text, i, `a number other than 1 is not a term (1 stands for the intercept; use --no-intercept to drop it)`);
    }
    if (c === "-")
      fail(
        text,
        i,
        "only the operators +, : and * are part of the model notation (use --no-intercept to drop the intercept)",
      );
    if ("^/|%".includes(c)) fail(text, i, `'${c}' is not an operator here: terms combine only with +, : and *`);
    fail(text, i, `unexpected character '${c}'`);
  }
  toks.push({ kind: "end", value: "", pos: text.length });
  return toks;
}

// A parsed expression is a list of terms, each a list of variable names
// (the empty list is the intercept).
type TermSet = string[][];

function key(t: string[]): string {
  return [...t].sort().join("\u0000");
}

function union(a: TermSet, b: TermSet): TermSet {
  const out = [...a];
  const seen = new Set(a.map(key));
  for (const t of b)
    if (!seen.has(key(t))) {
      seen.add(key(t));
      out.push(t);
    }
  return out;
}

function interact(a: TermSet, b: TermSet, tooMany: () => never): TermSet {
  if (a.length * b.length > FORMULA_LIMITS.terms) tooMany();
  const out: TermSet = [];
  for (const s of a)
    for (const t of b) {
      const merged = [...s];
      for (const v of t) if (!merged.includes(v)) merged.push(v);
      out.push(merged);
    }
  return union([], out);
}

/** Parse "COUNT ~ TERMS". */
export function parseFormula(text: string, options: { intercept?: boolean } = {}): Formula {
  const toks = tokenize(text);
  let k = 0;
  const peek = () => toks[k];
  const next = () => toks[k++];

  const first = next();
  if (first.kind !== "name")
    fail(text, first.pos, 'the model must start with the count column, as in "visits ~ clinic + weekday"');
  const response = first.value;
  const tilde = next();
  if (tilde.kind === "op" && tilde.value === "(")
    fail(
      text,
      tilde.pos,
      "transformations are not part of the model string; add the transformed column to the data instead",
    );
  if (!(tilde.kind === "op" && tilde.value === "~")) fail(text, tilde.pos, "expected '~' after the count column");

  let sawOne = false;
  let depth = 0;
  const tooMany = (): never =>
    fail(
      text,
      toks[Math.max(0, k - 1)].pos,
      `the model expands to more than ${FORMULA_LIMITS.terms} terms; write the interactions you need with ':' instead of '*'`,
    );
  const atom = (): TermSet => {
    const t = next();
    if (t.kind === "name") {
      if (peek().kind === "op" && peek().value === "(")
        fail(
          text,
          peek().pos,
          `'${t.value}' followed by a parenthesis reads as a transformation, which the model string does not take (only column names joined by +, : and *); add the transformed column to the data instead`,
        );
      return [[t.value]];
    }
    if (t.kind === "one") {
      sawOne = true;
      return [[]];
    }
    if (t.kind === "op" && t.value === "(") {
      if (++depth > FORMULA_LIMITS.nesting)
        fail(text, t.pos, `parentheses nest more than ${FORMULA_LIMITS.nesting} deep`);
      const inner = sum();
      depth--;
      const close = next();
      if (!(close.kind === "op" && close.value === ")"))
        fail(text, close.pos, "expected ')' to close the '(' opened earlier");
      return inner;
    }
    if (t.kind === "end") fail(text, t.pos, "expected a column name here; the model ends too early");
    fail(text, t.pos, `expected a column name, found '${t.value}'`);
  };
  const inter = (): TermSet => {
    let acc = atom();
    while (peek().kind === "op" && peek().value === ":") {
      next();
      acc = interact(acc, atom(), tooMany);
    }
    return acc;
  };
  const product = (): TermSet => {
    let acc = inter();
    while (peek().kind === "op" && peek().value === "*") {
      next();
      const r = inter();
      acc = union(union(acc, r), interact(acc, r, tooMany));
      if (acc.length > FORMULA_LIMITS.terms) tooMany();
    }
    return acc;
  };
  const sum = (): TermSet => {
    let acc = product();
    while (peek().kind === "op" && peek().value === "+") {
      next();
      acc = union(acc, product());
      if (acc.length > FORMULA_LIMITS.terms) tooMany();
    }
    return acc;
  };
  const all = sum();
  const end = peek();
  if (end.kind !== "end") {
    if (end.kind === "op" && end.value === "~") fail(text, end.pos, "only one '~' is allowed");
    if (end.kind === "op" && end.value === ")") fail(text, end.pos, "this ')' has no matching '('");
    fail(text, end.pos, `expected '+', ':' or '*' before '${end.value}'`);
  }
  void sawOne;
  const terms = all.filter((t) => t.length > 0);
  for (const t of terms)
    if (t.includes(response)) fail(text, first.pos, `the count column '${response}' also appears among the terms`);
  // Stable order by degree, as is usual for hierarchical models.
  const ordered = terms
    .map((t, i) => ({ t, i }))
    .sort((a, b) => a.t.length - b.t.length || a.i - b.i)
    .map((x) => ({ variables: x.t }));
  return { text, response, terms: ordered, intercept: options.intercept ?? true };
}

/** "COUNT ~ TERMS" for a response and a terms text, the response in backquotes when it is not a plain name. */
export function formulaText(response: string, terms: string): string {
  return `${/^[A-Za-z_.][A-Za-z0-9_.]*$/.test(response) ? response : `\`${response}\``} ~ ${terms}`;
}

/** Columns named anywhere in the terms. */
export function termVariables(spec: Formula): string[] {
  const out: string[] = [];
  for (const t of spec.terms) for (const v of t.variables) if (!out.includes(v)) out.push(v);
  return out;
}

export function termLabel(t: Term): string {
  return t.variables.join(":");
}
