// A compact text rootogram for a terminal: observed frequencies as blocks,
// expected as a marker, both on the square-root scale, counts binned to fit.
import type { Rootogram } from "../infer/diagnostics.js";
import { fixed, padStart } from "./format.js";

export function textRootogram(r: Rootogram, width: number, maxLines = 14): string[] {
  const n = r.counts.length;
  const per = Math.max(1, Math.ceil(n / maxLines)); // the rootogram's bins merged per line
  const bins: { label: string; o: number; e: number }[] = [];
  for (let j = 0; j < n; j += per) {
    const last = Math.min(n, j + per) - 1;
    const a = r.counts[j],
      b = r.counts[last] + r.binWidth - 1;
    let o = 0,
      e = 0;
    for (let k = j; k <= last; k++) {
      o += r.observed[k];
      e += r.expected[k];
    }
    bins.push({ label: a === b ? `${a}` : `${a}–${b}`, o, e });
  }
  const end = r.counts[n - 1] + r.binWidth - 1;
  if (r.tailObserved > 0 || r.tailExpected > 0.5) bins.push({ label: `>${end}`, o: r.tailObserved, e: r.tailExpected });
  const labelW = Math.max(...bins.map((b) => b.label.length), 5);
  const barW = Math.max(10, width - labelW - 26);
  const top = Math.max(...bins.map((b) => Math.sqrt(Math.max(b.o, b.e))), 1e-9);
  const out = [
    `  ${"count".padEnd(labelW)}  ${padStart("observed", 8)}  ${padStart("expected", 8)}  █ observed, ┃ expected (√ scale)`,
  ];
  for (const b of bins) {
    const ol = Math.round((Math.sqrt(b.o) / top) * barW);
    const el = Math.min(barW - 1, Math.round((Math.sqrt(b.e) / top) * barW));
    const cells: string[] = Array.from({ length: barW }, (_, i) => (i < ol ? "█" : " "));
    cells[Math.max(0, el - (el === barW ? 1 : 0))] = "┃";
    out.push(
      `  ${b.label.padEnd(labelW)}  ${padStart(fixed(b.o, 0), 8)}  ${padStart(fixed(b.e, 1), 8)}  ${cells.join("").trimEnd()}`,
    );
  }
  return out;
}
