/** Did-you-mean suggestions for misspelled keys and kind names. */

import { editDistance } from '../../stages/core/edit-distance.js';

export { editDistance };

const MAX_SUGGESTION_DISTANCE = 2;

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
