// Natural sort order and closest-name suggestions.

/**
 * Natural order: runs of digits compare as numbers, other runs by code unit,
 * so "ward2" < "ward10". Deterministic on every machine (no locale data).
 */
export function naturalCompare(a: string, b: string): number {
  const re = /(\d+|\D+)/g;
  const ra = a.match(re) ?? [];
  const rb = b.match(re) ?? [];
  const n = Math.min(ra.length, rb.length);
  for (let i = 0; i < n; i++) {
    const x = ra[i];
    const y = rb[i];
    const dx = /^\d/.test(x);
    const dy = /^\d/.test(y);
    if (dx && dy) {
      const tx = x.replace(/^0+(?=\d)/, "");
      const ty = y.replace(/^0+(?=\d)/, "");
      if (tx.length !== ty.length) return tx.length - ty.length;
      if (tx !== ty) return tx < ty ? -1 : 1;
      if (x.length !== y.length) return x.length - y.length;
    } else if (x !== y) {
      return x < y ? -1 : 1;
    }
  }
  return ra.length - rb.length;
}

/** Levenshtein edit distance (Wagner and Fischer 1974). */
export function editDistance(a: string, b: string): number {
  const m = a.length;
  const n = b.length;
  let prev = new Array(n + 1);
  for (let j = 0; j <= n; j++) prev[j] = j;
  for (let i = 1; i <= m; i++) {
    const cur = [i];
    for (let j = 1; j <= n; j++)
      cur[j] = Math.min(prev[j] + 1, cur[j - 1] + 1, prev[j - 1] + (a[i - 1] === b[j - 1] ? 0 : 1));
    prev = cur;
  }
  return prev[n];
}

/** The closest candidate (case-insensitive edit distance), when it is close enough to be a likely typo. */
/** Names longer than this, and more candidates than SUGGEST_MAX_CANDIDATES, get no suggestion (bounded effort). */
export const SUGGEST_MAX_LENGTH = 200;
export const SUGGEST_MAX_CANDIDATES = 10_000;

export function closestName(name: string, candidates: string[]): string | null {
  if (name.length > SUGGEST_MAX_LENGTH || candidates.length > SUGGEST_MAX_CANDIDATES) return null;
  let best: string | null = null;
  let bestD = Infinity;
  const limit = Math.max(1, Math.floor(name.length / 3));
  for (const c of candidates) {
    // Only names within the accepted distance in length can be within it in edit distance.
    if (Math.abs(c.length - name.length) > limit) continue;
    const d = editDistance(name.toLowerCase(), c.toLowerCase());
    if (d < bestD) {
      bestD = d;
      best = c;
    }
  }
  if (best === null) return null;
  return bestD <= Math.max(1, Math.floor(name.length / 3)) && bestD < name.length ? best : null;
}

/** "a, b and c" with quoted names, cut after `max`. */
export function listNames(names: string[], max = 12): string {
  const q = names.slice(0, max).map((n) => `'${n}'`);
  const more = names.length > max ? ` and ${names.length - max} more` : "";
  return q.join(", ") + more;
}
