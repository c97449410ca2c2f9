// "Did you mean" for misspelt keys and flags: the closest known name by edit distance.

/** The known name closest to `name` (case-insensitive Levenshtein distance ≤ 2), if any. */
export function nearestName(name: string, known: readonly string[]): string | undefined {
  // Two edits catch the usual slips (a swapped or doubled letter) without wild guesses.
  const MAX_DISTANCE = 2;
  let best: string | undefined;
  let bestDistance = MAX_DISTANCE + 1;
  for (const candidate of known) {
    const d = editDistance(name.toLowerCase(), candidate.toLowerCase());
    if (d < bestDistance) {
      best = candidate;
      bestDistance = d;
    }
  }
  return best;
}

function editDistance(a: string, b: string): number {
  let previous = Array.from({ length: b.length + 1 }, (_, j) => j);
  for (let i = 1; i <= a.length; i++) {
    const current = [i];
    for (let j = 1; j <= b.length; j++) {
      const substitution = previous[j - 1]! + (a[i - 1] === b[j - 1] ? 0 : 1);
      current[j] = Math.min(previous[j]! + 1, current[j - 1]! + 1, substitution);
    }
    previous = current;
  }
  return previous[b.length]!;
}
