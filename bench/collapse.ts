// The benchmark file collapsed by covariate pattern, written independently of
// tallyfit's own merging (design/patterns.ts): a plain Map keyed by the text of
// the covariates, summing exposure and count. A Poisson fit of this file must
// give the estimates of the fit of every row.
import { createReadStream, createWriteStream } from "node:fs";
import { once } from "node:events";
import { createInterface } from "node:readline";

/** Write `out`: one row per (region, agegrp, sex, insured, score) with the summed exposure and visits. */
export async function collapseBenchFile(file: string, out: string): Promise<{ rows: number; patterns: number }> {
  const groups = new Map<string, { exposure: number; visits: number }>();
  let rows = 0,
    header = true;
  for await (const line of createInterface({ input: createReadStream(file), crlfDelay: Infinity })) {
    if (header) {
      header = false;
      continue;
    }
    if (line === "") continue;
    const f = line.split(",");
    const key = f.slice(0, 5).join(",");
    const g = groups.get(key);
    if (g) {
      g.exposure += Number(f[5]);
      g.visits += Number(f[6]);
    } else groups.set(key, { exposure: Number(f[5]), visits: Number(f[6]) });
    rows++;
  }
  const w = createWriteStream(out);
  w.write("region,agegrp,sex,insured,score,exposure,visits\n");
  let buf = "";
  for (const [key, g] of groups) {
    buf += `${key},${g.exposure},${g.visits}\n`;
    if (buf.length > 1 << 16) {
      if (!w.write(buf)) await once(w, "drain");
      buf = "";
    }
  }
  w.write(buf);
  w.end();
  await once(w, "finish");
  return { rows, patterns: groups.size };
}
