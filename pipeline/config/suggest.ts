/** Did-you-mean suggestions for misspelled keys and kind names. */

const MAX_SUGGESTION_DISTANCE = 2;

/** Levenshtein edit distance (insert, delete, substitute each cost 1). */
export function editDistance(a: string, b: string): number {
  let prev = new Uint32Array(b.length + 1);
  let cur = new Uint32Array(b.length + 1);
  for (let j = 0; j <= b.length; j++) prev[j] = j;
  for (let i = 1; i <= a.length; i++) {
    cur[0] = i;
    for (let j = 1; j <= b.length; j++) {
      const sub = prev[j - 1] + (a.charCodeAt(i - 1) === b.charCodeAt(j - 1) ? 0 : 1);
      cur[j] = Math.min(sub, prev[j] + 1, cur[j - 1] + 1);
    }
    [prev, cur] = [cur, prev];
  }
  return prev[b.length];
}

/**
 * A hint for a word that is not among `allowed`: the closest allowed word within edit distance 2,
 * else the full list (ties go to the earlier word in `allowed`, which is the schema's order).
 */
export function suggestionHint(word: string, allowed: readonly string[], noun: string): string {
  let best = '';
  let bestDistance = MAX_SUGGESTION_DISTANCE + 1;
  for (const candidate of allowed) {
    const d = editDistance(word, candidate);
    if (d < bestDistance) {
      best = candidate;
      bestDistance = d;
    }
  }
  if (best !== '') return `did you mean "${best}"?`;
  if (allowed.length === 0) return `no ${noun}s are allowed here`;
  return `allowed ${noun}s: ${allowed.join(', ')}`;
}
