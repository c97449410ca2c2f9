// "Did you mean": the known name closest to a misspelt one, by edit distance. The one rule for
// every suggestion (tags and their keywords in discovery, project-file keys, CLI commands and
// flags), so the same slip gets the same answer everywhere.

/** Largest edit distance at which a known name is suggested: two edits catch the usual slips
 * (a swapped, doubled or missing letter) without wild guesses (our choice). */
export const MAX_SUGGESTION_DISTANCE = 2;

/**
 * Optimal string alignment distance: insertions, deletions, substitutions and swaps of two
 * neighbouring letters each cost 1 (Damerau's 1964 rule for single typing errors).
 */
export function editDistance(a: string, b: string): number {
  const rows = a.length + 1;
  const cols = b.length + 1;
  const d: number[] = new Array<number>(rows * cols).fill(0);
  for (let i = 0; i < rows; i++) d[i * cols] = i;
  for (let j = 0; j < cols; j++) d[j] = j;
  for (let i = 1; i < rows; i++) {
    for (let j = 1; j < cols; j++) {
      const cost = a[i - 1] === b[j - 1] ? 0 : 1;
      let v = Math.min(d[(i - 1) * cols + j]! + 1, d[i * cols + j - 1]! + 1, d[(i - 1) * cols + j - 1]! + cost);
      if (i > 1 && j > 1 && a[i - 1] === b[j - 2] && a[i - 2] === b[j - 1]) v = Math.min(v, d[(i - 2) * cols + j - 2]! + 1);
      d[i * cols + j] = v;
    }
  }
  return d[rows * cols - 1]!;
}

/** The known name closest to `name` (case-insensitive, distance ≤ `maxDistance`); the first of equals wins. */
export function nearestName(name: string, known: readonly string[], maxDistance = MAX_SUGGESTION_DISTANCE): string | undefined {
  let best: string | undefined;
  let bestDistance = maxDistance + 1;
  const lower = name.toLowerCase();
  for (const candidate of known) {
    const d = editDistance(lower, candidate.toLowerCase());
    if (d < bestDistance) {
      best = candidate;
      bestDistance = d;
    }
  }
  return best;
}
