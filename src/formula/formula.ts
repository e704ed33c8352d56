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

function fail(text: string, pos: number, what: string): never {
  const caret = `${" ".repeat(Math.max(0, pos))}^`;
  throw new InputError(`--model: ${what}\n  ${text}\n  ${caret}`);
}

function tokenize(text: string): Tok[] {
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
    const m = /^[A-Za-z_.][A-Za-z0-9_.]*/.exec(text.slice(i));
    if (m) {
      toks.push({ kind: "name", value: m[0], pos: i });
      i += m[0].length;
      continue;
    }
    const num = /^\d+(?:\.\d*)?/.exec(text.slice(i));
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

function interact(a: TermSet, b: TermSet): TermSet {
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
      const inner = sum();
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
      acc = interact(acc, atom());
    }
    return acc;
  };
  const product = (): TermSet => {
    let acc = inter();
    while (peek().kind === "op" && peek().value === "*") {
      next();
      const r = inter();
      acc = union(union(acc, r), interact(acc, r));
    }
    return acc;
  };
  const sum = (): TermSet => {
    let acc = product();
    while (peek().kind === "op" && peek().value === "+") {
      next();
      acc = union(acc, product());
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

/** Columns named anywhere in the terms. */
export function termVariables(spec: Formula): string[] {
  const out: string[] = [];
  for (const t of spec.terms) for (const v of t.variables) if (!out.includes(v)) out.push(v);
  return out;
}

export function termLabel(t: Term): string {
  return t.variables.join(":");
}
