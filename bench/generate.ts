// Seeded benchmark data: three factors (20, 6 and 2 levels), a 0/1 column, a
// numeric covariate, an exposure and a count, written as CSV. Invented data.
import { createWriteStream } from "node:fs";
import { once } from "node:events";
import { negbinDraw, uniformGenerator } from "../src/math/random.js";

/** Write `rows` rows to `path`; alpha > 0 makes the counts negative binomial. */
export async function writeBenchFile(path: string, rows: number, seed = 1, alpha = 0.3): Promise<void> {
  const u = uniformGenerator(seed);
  const out = createWriteStream(path);
  out.write("region,agegrp,sex,insured,score,exposure,visits\n");
  const reg = Array.from({ length: 20 }, (_, i) => Math.sin(i) * 0.4);
  const age = [0, 0.2, 0.35, 0.5, 0.7, 0.9];
  let buf = "";
  for (let i = 0; i < rows; i++) {
    const r = Math.floor(u() * 20),
      a = Math.floor(u() * 6),
      s = u() < 0.5 ? 1 : 0,
      ins = u() < 0.7 ? 1 : 0;
    const score = Math.round(u() * 1000) / 100;
    const e = Math.round((0.5 + u() * 4) * 100) / 100;
    const mu = e * Math.exp(-0.5 + reg[r] + age[a] + 0.15 * s - 0.2 * ins + 0.03 * score);
    buf += `r${r + 1},a${a + 1},${s ? "f" : "m"},${ins},${score},${e},${negbinDraw(u, mu, alpha)}\n`;
    if (buf.length > 1 << 16) {
      if (!out.write(buf)) await once(out, "drain");
      buf = "";
    }
  }
  out.write(buf);
  out.end();
  await once(out, "finish");
}
