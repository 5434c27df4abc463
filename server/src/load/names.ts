/**
 * Small helpers for naming things in messages: the closest declared name (for "did you mean"),
 * readable JSON paths and transition arrows.
 */

/**
 * Edit distance counting insertions, deletions, substitutions and swaps of two adjacent characters
 * as 1 each (the optimal string alignment distance, Damerau's extension of Levenshtein's), capped
 * at `limit + 1`. Swaps matter: "gaol" for "goal" is the commonest kind of typo.
 */
export function editDistance(a: string, b: string, limit = Number.POSITIVE_INFINITY): number {
  if (Math.abs(a.length - b.length) > limit) return limit + 1;
  let beforePrevious = new Array<number>(b.length + 1).fill(0);
  let previous = new Array<number>(b.length + 1);
  let current = new Array<number>(b.length + 1);
  for (let j = 0; j <= b.length; j++) previous[j] = j;
  let previousRowMinimum = 0;
  for (let i = 1; i <= a.length; i++) {
    current[0] = i;
    let rowMinimum = current[0];
    for (let j = 1; j <= b.length; j++) {
      const cost = a.charCodeAt(i - 1) === b.charCodeAt(j - 1) ? 0 : 1;
      let best = Math.min(previous[j] + 1, current[j - 1] + 1, previous[j - 1] + cost);
      if (
        i > 1 &&
        j > 1 &&
        a.charCodeAt(i - 1) === b.charCodeAt(j - 2) &&
        a.charCodeAt(i - 2) === b.charCodeAt(j - 1)
      ) {
        best = Math.min(best, beforePrevious[j - 2] + 1);
      }
      current[j] = best;
      if (best < rowMinimum) rowMinimum = best;
    }
    // Row i+1 is at least min(row i, row i-1 + 1) (a swap reaches back two rows), so once both
    // rows are past the limit every later row is too.
    if (rowMinimum > limit && previousRowMinimum >= limit) return limit + 1;
    previousRowMinimum = rowMinimum;
    [beforePrevious, previous, current] = [previous, current, beforePrevious];
  }
  return Math.min(previous[b.length], limit + 1);
}

/**
 * The candidate that looks like a typo of `name`: case-insensitively equal, or within an edit
 * distance of about a third of the name's length (at least 1, at most 3). Undefined when none is
 * that close or when two candidates are equally close.
 */
export function closestName(name: string, candidates: Iterable<string>): string | undefined {
  const lower = name.toLowerCase();
  const limit = Math.max(1, Math.min(3, Math.floor(name.length / 3)));
  let best: string | undefined;
  let bestDistance = limit + 1;
  let tied = false;
  for (const candidate of candidates) {
    if (candidate === name) continue;
    const distance = candidate.toLowerCase() === lower ? 0 : editDistance(lower, candidate.toLowerCase(), limit);
    if (distance < bestDistance) {
      best = candidate;
      bestDistance = distance;
      tied = false;
    } else if (distance === bestDistance && distance <= limit) {
      tied = true;
    }
  }
  return best !== undefined && !tied ? best : undefined;
}

const IDENTIFIER = /^[A-Za-z_$][A-Za-z0-9_$-]*$/;

/** A readable JSON path such as `transitions[3].to` or `states["dock 2"].terminal`; "the spec" for the root. */
export function jsonPath(segments: ReadonlyArray<string | number>): string {
  let path = '';
  for (const segment of segments) {
    if (typeof segment === 'number') path += `[${segment}]`;
    else if (IDENTIFIER.test(segment)) path += path === '' ? segment : `.${segment}`;
    else path += `[${JSON.stringify(segment)}]`;
  }
  return path === '' ? 'the spec' : path;
}

/** A state or action name quoted for a message. */
export function quote(name: string): string {
  return `'${name}'`;
}

/** `'roof' --hover-->`: the (state, action) pair of a transition, as messages show it. */
export function arrow(from: string, action: string): string {
  return `${quote(from)} --${action}-->`;
}

/** A number as messages show it: up to 6 significant digits, no exponent for everyday sizes. */
export function formatNumber(value: number): string {
  if (Number.isNaN(value)) return 'NaN';
  if (!Number.isFinite(value)) return value > 0 ? 'infinity' : '-infinity';
  if (value === 0) return '0';
  const magnitude = Math.abs(value);
  if (magnitude >= 1e-4 && magnitude < 1e9) return String(Number(value.toPrecision(6)));
  // 1.50e-7 -> 1.5e-7, 1.00e12 -> 1e12
  return value
    .toExponential(2)
    .replace(/\.?0+e/, 'e')
    .replace('e+', 'e');
}

/** "a, b and c" */
export function listNames(names: readonly string[], limit = 8): string {
  const shown = names.slice(0, limit).map(quote);
  const rest = names.length - shown.length;
  if (rest > 0) return `${shown.join(', ')} and ${rest} more`;
  if (shown.length <= 1) return shown.join('');
  return `${shown.slice(0, -1).join(', ')} and ${shown[shown.length - 1]}`;
}
