// "Did you mean …": the closest allowed word, for error messages.

/** Edit distance counting insertions, deletions, substitutions and swaps of neighbours (optimal string alignment). */
export function editDistance(a: string, b: string): number {
  const d: number[][] = Array.from({ length: a.length + 1 }, (_, i) => [i, ...new Array<number>(b.length).fill(0)]);
  for (let j = 1; j <= b.length; j++) d[0][j] = j;
  for (let i = 1; i <= a.length; i++) {
    for (let j = 1; j <= b.length; j++) {
      const cost = a[i - 1] === b[j - 1] ? 0 : 1;
      d[i][j] = Math.min(d[i - 1][j] + 1, d[i][j - 1] + 1, d[i - 1][j - 1] + cost);
      if (i > 1 && j > 1 && a[i - 1] === b[j - 2] && a[i - 2] === b[j - 1]) d[i][j] = Math.min(d[i][j], d[i - 2][j - 2] + 1);
    }
  }
  return d[a.length][b.length];
}

/**
 * The candidate most likely meant by `word`: the nearest within a third of its length (1 to 3
 * edits), else one that starts with the word's stem (≥ 4 letters, a plural "s" dropped).
 */
export function closest(word: string, candidates: readonly string[]): string | undefined {
  const lower = word.toLowerCase();
  let best: string | undefined;
  let bestDist = Infinity;
  for (const c of candidates) {
    const d = editDistance(lower, c.toLowerCase());
    if (d < bestDist) {
      best = c;
      bestDist = d;
    }
  }
  if (bestDist <= Math.min(3, Math.max(1, Math.floor(word.length / 3)))) return best;
  const stem = lower.replace(/s$/, "");
  if (stem.length >= 4) return candidates.find((c) => c.toLowerCase().startsWith(stem));
  return undefined;
}
