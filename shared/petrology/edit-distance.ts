/**
 * Levenshtein edit distance (insertions, deletions, substitutions; Levenshtein 1966) and a nearest-name helper
 * for suggesting a valid name in error messages ("did you mean …?").
 */

/** Edit distance between a and b (case-sensitive; normalise before calling if needed). */
export function editDistance(a: string, b: string): number {
  if (a === b) return 0;
  if (a.length === 0) return b.length;
  if (b.length === 0) return a.length;
  let prev = new Array<number>(b.length + 1);
  let cur = new Array<number>(b.length + 1);
  for (let j = 0; j <= b.length; j++) prev[j] = j;
  for (let i = 1; i <= a.length; i++) {
    cur[0] = i;
    for (let j = 1; j <= b.length; j++) {
      const cost = a.charCodeAt(i - 1) === b.charCodeAt(j - 1) ? 0 : 1;
      cur[j] = Math.min(prev[j] + 1, cur[j - 1] + 1, prev[j - 1] + cost);
    }
    [prev, cur] = [cur, prev];
  }
  return prev[b.length];
}

/** Lower-cases, trims, and turns underscores, en dashes and runs of spaces into single hyphens. */
export function normalizeName(s: string): string {
  return s
    .trim()
    .toLowerCase()
    .replace(/[\s_–—]+/g, '-');
}

/**
 * The candidate nearest to `name` by edit distance after normalisation, or null when none is within
 * `maxDistance` (default: a third of the name's length, at least 2).
 */
export function nearestName(name: string, candidates: readonly string[], maxDistance?: number): string | null {
  const n = normalizeName(name);
  const limit = maxDistance ?? Math.max(2, Math.floor(n.length / 3));
  let best: string | null = null,
    bestD = Infinity;
  for (const c of candidates) {
    const d = editDistance(n, normalizeName(c));
    if (d < bestD) {
      bestD = d;
      best = c;
    }
  }
  return bestD <= limit ? best : null;
}
