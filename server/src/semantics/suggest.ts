/** "Did you mean" suggestions by edit distance (common practice: Damerau–Levenshtein with a small cap). */

export function editDistance(a: string, b: string): number {
  const m = a.length;
  const n = b.length;
  if (Math.abs(m - n) > 3) return Math.abs(m - n);
  const d: number[][] = Array.from({ length: m + 1 }, (_, i) => Array.from({ length: n + 1 }, (_, j) => (i === 0 ? j : j === 0 ? i : 0)));
  for (let i = 1; i <= m; i++) {
    for (let j = 1; j <= n; j++) {
      const cost = a[i - 1] === b[j - 1] ? 0 : 1;
      let v = Math.min(d[i - 1]![j]! + 1, d[i]![j - 1]! + 1, d[i - 1]![j - 1]! + cost);
      if (i > 1 && j > 1 && a[i - 1] === b[j - 2] && a[i - 2] === b[j - 1]) v = Math.min(v, d[i - 2]![j - 2]! + 1);
      d[i]![j] = v;
    }
  }
  return d[m]![n]!;
}

/** The closest candidate within a distance that scales with the word's length, or null. */
export function suggest(word: string, candidates: Iterable<string>): string | null {
  const limit = word.length <= 3 ? 1 : word.length <= 6 ? 2 : 3;
  let best: string | null = null;
  let bestDist = Infinity;
  for (const c of candidates) {
    if (c === word) continue;
    const dist = editDistance(word.toLowerCase(), c.toLowerCase());
    if (dist < bestDist || (dist === bestDist && best !== null && c < best)) {
      best = c;
      bestDist = dist;
    }
  }
  return best !== null && bestDist <= limit ? best : null;
}
