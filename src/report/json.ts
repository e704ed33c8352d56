// JSON output of every command: two-space indentation, a final newline, null for numbers JSON cannot hold.

/** Numbers that JSON cannot hold (NaN, ±Infinity) become null. */
function jsonValue(_k: string, v: unknown): unknown {
  return typeof v === "number" && !Number.isFinite(v) ? null : v;
}

export function renderJson(value: unknown): string {
  return `${JSON.stringify(value, jsonValue, 2)}\n`;
}
