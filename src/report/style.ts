// Colour marks only verdicts and warnings, and only when asked for.
import { Chalk } from "chalk";

export interface Style {
  good(s: string): string;
  caution(s: string): string;
  bad(s: string): string;
  heading(s: string): string;
}

export function makeStyle(color: boolean): Style {
  if (!color) {
    const id = (s: string) => s;
    return { good: id, caution: id, bad: id, heading: id };
  }
  const c = new Chalk({ level: 1 });
  // Blue and orange stay distinct for the common colour-vision deficiencies; bold carries the meaning in greyscale.
  return {
    good: (s) => c.blue(s),
    caution: (s) => c.bold.yellow(s),
    bad: (s) => c.bold.red(s),
    heading: (s) => c.bold(s),
  };
}

/** Whether to colour a stream: a TTY, no NO_COLOR, no --no-color. */
export function wantColor(isTTY: boolean | undefined, env: NodeJS.ProcessEnv, flag: boolean): boolean {
  if (!flag) return false;
  if (env.NO_COLOR !== undefined && env.NO_COLOR !== "") return false;
  if (env.FORCE_COLOR !== undefined && env.FORCE_COLOR !== "0") return true;
  return isTTY === true;
}
