import { editDistance } from '../load/names';

/**
 * The rule ids closest to a mistyped one (edit distance at most 3, a swap of two neighbours
 * counting 1), best first. The config file's validation and `episcope explain` both use it.
 */
export function suggestRules(id: string, rules: readonly { id: string }[]): string[] {
  return rules
    .map((r) => ({ id: r.id, distance: editDistance(id, r.id, 3) }))
    .filter((r) => r.distance <= 3)
    .sort((a, b) => a.distance - b.distance || a.id.localeCompare(b.id))
    .slice(0, 3)
    .map((r) => r.id);
}
