// The bad-input cases: each with the input, the command, the exit code and
// what the first line of the message must say. Used by bad-input.test.ts,
// and by `node dist/test/error-cases.js` to print the README's table.
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { runCli } from "../helpers.js";

export interface ErrorCase {
  mistake: string;
  /** File content (written to a temporary file named `file`), or bytes. */
  content: string | Uint8Array;
  file?: string;
  /** Arguments after the file. */
  args: string[];
  code: number;
  message: RegExp;
}

const ok = "ward,beds,falls,x\na,100,3,1.5\nb,120,5,2.5\na,90,2,0.5\nb,80,4,1.0\n";
const M = ["--model", "falls ~ ward + x", "--exposure", "beds"];

export const CASES: ErrorCase[] = [
  { mistake: "empty file", content: "", args: M, code: 2, message: /the file is empty/ },
  { mistake: "header only", content: "ward,beds,falls,x\n", args: M, code: 2, message: /header row but no data rows/ },
  {
    mistake: "duplicated column name",
    content: "ward,beds,falls,ward\na,1,2,b\n",
    args: M,
    code: 2,
    message: /row 1: column name 'ward' appears twice \(columns 1 and 4\)/,
  },
  {
    mistake: "empty column name",
    content: "ward,beds,falls,x,\na,100,3,1.5,\n",
    args: M,
    code: 2,
    message: /row 1: column 5 of 5 has no name/,
  },
  {
    mistake: "unknown column in --model",
    content: ok,
    args: ["--model", "falls ~ wrd", "--exposure", "beds"],
    code: 2,
    message:
      /model column 'wrd' is not in the file\. Did you mean 'ward'\? The columns are 'ward', 'beds', 'falls', 'x'/,
  },
  {
    mistake: "unknown --exposure column",
    content: ok,
    args: ["--model", "falls ~ ward", "--exposure", "bed"],
    code: 2,
    message: /exposure column 'bed' is not in the file\. Did you mean 'beds'\?/,
  },
  {
    mistake: "unknown --offset column",
    content: ok,
    args: ["--model", "falls ~ ward", "--offset", "logbeds"],
    code: 2,
    message: /offset column 'logbeds' is not in the file/,
  },
  {
    mistake: "unknown --weights column",
    content: ok,
    args: ["--model", "falls ~ ward", "--weights", "w"],
    code: 2,
    message: /weights column 'w' is not in the file/,
  },
  {
    mistake: "unknown --ref column",
    content: ok,
    args: [...M, "--ref", "wards=a"],
    code: 2,
    message: /--ref column 'wards' is not in the file\. Did you mean 'ward'\?/,
  },
  {
    mistake: "unknown --ref level",
    content: ok,
    args: [...M, "--ref", "ward=c"],
    code: 2,
    message: /--ref ward=c: 'c' is not a level of 'ward' among the rows used\. The levels are 'a', 'b'/,
  },
  {
    mistake: "count column is text",
    content: "ward,beds,falls,x\na,100,three,1\nb,1,2,3\n",
    args: M,
    code: 2,
    message: /the count column 'falls' must be numeric, but row 2 holds 'three'/,
  },
  {
    mistake: "negative count",
    content: "ward,beds,falls,x\na,100,3,1\nb,100,-2,2\n",
    args: M,
    code: 2,
    message: /row 3, column 'falls': the count is -2; counts must be whole numbers ≥ 0/,
  },
  {
    mistake: "non-integer count",
    content: "ward,beds,falls,x\na,100,2.5,1\nb,100,2,2\n",
    args: M,
    code: 2,
    message: /row 2, column 'falls': the count is 2\.5/,
  },
  {
    mistake: "infinite count",
    content: "ward,beds,falls,x\na,100,Infinity,1\nb,100,2,2\n",
    args: M,
    code: 2,
    message: /count column 'falls' must be numeric, but row 2 holds 'Infinity', which is not a finite number/,
  },
  {
    mistake: "zero exposure with a positive count",
    content: "ward,beds,falls,x\na,0,3,1\nb,100,2,2\n",
    args: M,
    code: 2,
    message: /row 2, column 'beds': exposure 0 with a count of 3; a positive count needs positive exposure/,
  },
  {
    mistake: "negative exposure",
    content: "ward,beds,falls,x\na,-5,0,1\nb,100,2,2\n",
    args: M,
    code: 2,
    message: /row 2, column 'beds': exposure -5 with a count of 0; exposure cannot be negative/,
  },
  {
    mistake: "too many fields in a row",
    content: "ward,beds,falls,x\na,100,3,1,9\n",
    args: M,
    code: 2,
    message: /row 2 \(line 2\): 5 fields where the header has 4/,
  },
  {
    mistake: "too few fields in a row",
    content: "ward,beds,falls,x\na,100,3,1\nb,100\n",
    args: M,
    code: 2,
    message: /row 3 \(line 3\): 2 fields where the header has 4/,
  },
  {
    mistake: "unterminated quote",
    content: 'ward,beds,falls,x\n"a,100,3,1\nb,100,2,2\n',
    args: M,
    code: 2,
    message: /a quoted field is never closed/,
  },
  {
    mistake: "invalid UTF-8",
    content: new Uint8Array([...Buffer.from("ward,beds,falls,x\n"), 0x77, 0xe9, ...Buffer.from(",100,3,1\n")]),
    args: M,
    code: 2,
    message: /line 2: the file is not valid UTF-8 \(byte 0xe9 at offset 19\)/,
  },
  {
    mistake: "wrong delimiter",
    content: "ward;beds;falls;x\na;100;3;1\n",
    args: M,
    code: 2,
    message: /uses ';' between fields, not ','.*--delimiter ';'/,
  },
  {
    mistake: "factor with a single level",
    content: "ward,beds,falls,x\na,100,3,1\na,100,2,2\na,50,1,3\n",
    args: M,
    code: 2,
    message: /factor 'ward' has a single level \('a'\) among the rows used/,
  },
  {
    mistake: "more coefficients than rows",
    content: "ward,beds,falls,x\na,100,3,1\nb,100,2,2\n",
    args: ["--model", "falls ~ ward*x", "--exposure", "beds"],
    code: 2,
    message: /the model has 4 coefficients but only 2 rows are used/,
  },
  {
    mistake: "all-zero response",
    content: "ward,beds,falls,x\na,100,0,1\nb,100,0,2\na,100,0,3\n",
    args: M,
    code: 2,
    message: /the count column 'falls' is 0 in every row used/,
  },
  {
    mistake: "model syntax error",
    content: ok,
    args: ["--model", "falls ~ ward + + x"],
    code: 2,
    message: /--model: expected a column name, found '\+'/,
  },
  {
    mistake: "transformation in the model",
    content: ok,
    args: ["--model", "falls ~ log(x)"],
    code: 2,
    message: /'log' followed by a parenthesis reads as a transformation, which the model string does not take/,
  },
  {
    mistake: "missing file",
    content: ok,
    file: "__absent__.csv",
    args: M,
    code: 2,
    message: /__absent__\.csv: cannot read the file \(no such file\)/,
  },
  {
    mistake: "bad option value",
    content: ok,
    args: [...M, "--level", "1.5"],
    code: 2,
    message: /--level must be a number between 0 and 1/,
  },
  {
    mistake: "reference level with no events (given with --ref)",
    content: "ward,beds,falls,x\na,100,0,1\nb,100,3,2\na,100,0,3\nb,90,5,1\n",
    args: [...M, "--ref", "ward=a"],
    code: 3,
    message: /the reference level 'a' of 'ward' has no events in its 2 rows.*--ref ward=b/,
  },
  {
    mistake: "IRLS cannot converge",
    content: ok,
    args: [...M, "--max-iter", "1"],
    code: 3,
    message: /the model could not be fitted: IRLS did not converge in 1 iterations/,
  },
  {
    mistake: "limit: parentheses nested over 100 deep",
    content: ok,
    args: ["--model", `falls ~ ${"(".repeat(101)}ward${")".repeat(101)}`],
    code: 2,
    message: /--model: parentheses nest more than 100 deep/,
  },
  {
    mistake: "limit: a model of over 1,000 terms",
    content: ok,
    args: ["--model", `falls ~ ${Array.from({ length: 11 }, (_, i) => `v${i}`).join("*")}`],
    code: 2,
    message: /--model: the model expands to more than 1000 terms/,
  },
  {
    mistake: "limit: a model string over 10,000 characters",
    content: ok,
    args: ["--model", `falls ~ ${"ward+".repeat(2100)}ward`],
    code: 2,
    message: /--model: the model string is longer than 10000 characters/,
  },
  {
    mistake: "limit: over 2,000 coefficients",
    content: `g,falls\n${Array.from({ length: 2100 }, (_, i) => `l${i},${i % 3}`).join("\n")}\n`,
    args: ["--model", "falls ~ g"],
    code: 2,
    message: /the model has 2100 coefficients; tallyfit fits at most 2000/,
  },
  {
    mistake: "limit: a line over 64 MB (or a file with no line breaks)",
    content: new Uint8Array(65_000_000).fill(0x61),
    args: M,
    code: 2,
    message: /a line longer than 64 MB/,
  },
  {
    mistake: "NUL bytes (not a text file)",
    content: "ward,beds,falls\na,1\u0000,2\n",
    args: M,
    code: 2,
    message: /line 2: the file holds a NUL byte/,
  },
  {
    mistake: "UTF-16 text",
    content: new Uint8Array(Buffer.from("\ufeffward,beds,falls\n", "utf16le")),
    args: M,
    code: 2,
    message: /UTF-16 text, not UTF-8/,
  },
  {
    mistake: "GEE without the clusters",
    content: ok,
    args: [...M, "--gee", "exchangeable"],
    code: 2,
    message: /--gee solves the estimating equations within clusters: give the clusters with --cluster COL/,
  },
  {
    mistake: "two rows of one cluster at the same place in --order-by",
    content: "ward,month,beds,falls,x\na,1,100,3,1.5\na,1,120,5,2.5\nb,1,90,2,0.5\nb,2,80,4,1.0\n",
    args: [...M, "--cluster", "ward", "--gee", "ar1", "--order-by", "month"],
    code: 2,
    message: /rows 2 and 3, column 'month': both rows of ward 'a' are at '1'/,
  },
  {
    mistake: "one cluster only",
    content: "ward,beds,falls,x,site\na,100,3,1.5,s1\nb,120,5,2.5,s1\na,90,2,0.5,s1\nb,80,4,1.0,s1\n",
    args: [...M, "--cluster", "site"],
    code: 2,
    message: /--cluster site: every row used is in one cluster \('s1'\)/,
  },
  {
    mistake: "damaged gzip-compressed file",
    content: new Uint8Array([0x1f, 0x8b, 8, 0, 0, 0, 0, 0]),
    args: M,
    code: 2,
    message: /the gzip data is damaged \(unexpected end of file\); compress the CSV again/,
  },
];

export function runCase(c: ErrorCase) {
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-bad-"));
  const f = join(dir, c.file === "__absent__.csv" ? "present.csv" : "data.csv");
  writeFileSync(f, c.content);
  const path = c.file === "__absent__.csv" ? join(dir, "__absent__.csv") : f;
  return runCli(["fit", path, ...c.args]);
}

/** First line of the message without the temporary folder. */
export function firstLine(stderr: string): string {
  const line = stderr.split("\n").find((l) => l.startsWith("tallyfit:")) ?? "";
  return line.replace(/\/tmp\/tallyfit-bad-[^/]+\//g, "");
}

if (process.argv[2] === "--markdown") {
  console.log("| mistake | first line of the message | exit |\n|---|---|---|");
  for (const c of CASES) {
    const r = runCase(c);
    console.log(`| ${c.mistake} | \`${firstLine(r.stderr).replace(/\|/g, "\\|").replace(/`/g, "'")}\` | ${r.code} |`);
  }
}
