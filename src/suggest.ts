/** "Did you mean …?" hints for names the user mistyped (fields, flags, gallery names, joint ids). */

/** Levenshtein distance, case-insensitive. */
export function editDistance(a: string, b: string): number {
  const s = a.toLowerCase();
  const t = b.toLowerCase();
  const prev = Array.from({ length: t.length + 1 }, (_, j) => j);
  for (let i = 1; i <= s.length; i++) {
    let diag = prev[0];
    prev[0] = i;
    for (let j = 1; j <= t.length; j++) {
      const up = prev[j];
      prev[j] = Math.min(up + 1, prev[j - 1] + 1, diag + (s[i - 1] === t[j - 1] ? 0 : 1));
      diag = up;
    }
  }
  return prev[t.length];
}

/**
 * The closest of `candidates` to `word`. By default only a likely typo is returned (at most one
 * edit per three letters; very short names only when they differ in case alone); with
 * `always` the nearest candidate is returned whatever its distance.
 */
export function closestWord(word: string, candidates: readonly string[], always = false): string | undefined {
  let best: string | undefined;
  let bestD = Infinity;
  for (const c of candidates) {
    const d = editDistance(word, c);
    if (d < bestD) {
      bestD = d;
      best = c;
    }
  }
  if (best === undefined || always) return best;
  const limit = Math.floor(Math.max(word.length, best.length) / 3);
  return bestD <= limit ? best : undefined;
}
