import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { closestName, editDistance, formatNumber, jsonPath } from '../../server/src/load/names';

/** Textbook recurrence of the optimal string alignment distance, without cut-offs, as the reference. */
function referenceDistance(a: string, b: string): number {
  const d = Array.from({ length: a.length + 1 }, (_, i) =>
    Array.from({ length: b.length + 1 }, (_, j) => (i === 0 ? j : j === 0 ? i : 0)),
  );
  for (let i = 1; i <= a.length; i++) {
    for (let j = 1; j <= b.length; j++) {
      const cost = a[i - 1] === b[j - 1] ? 0 : 1;
      d[i][j] = Math.min(d[i - 1][j] + 1, d[i][j - 1] + 1, d[i - 1][j - 1] + cost);
      if (i > 1 && j > 1 && a[i - 1] === b[j - 2] && a[i - 2] === b[j - 1])
        d[i][j] = Math.min(d[i][j], d[i - 2][j - 2] + 1);
    }
  }
  return d[a.length][b.length];
}

describe('editDistance', () => {
  it('gives the published values', () => {
    // Levenshtein (1966) distance of the classic pair: kitten -> sitting takes 3 edits (from memory,
    // the standard textbook example; the reference recurrence below agrees).
    expect(editDistance('kitten', 'sitting')).toBe(3);
    // The optimal string alignment distance of CA -> ABC is 3 (not 2 as with unrestricted
    // transpositions): the example of the Damerau-Levenshtein distance article on Wikipedia.
    expect(editDistance('CA', 'ABC')).toBe(3);
    expect(editDistance('gaol', 'goal')).toBe(1);
    expect(editDistance('', 'abc')).toBe(3);
  });

  it('agrees with the plain recurrence, and its cut-off never undercuts it', () => {
    fc.assert(
      fc.property(
        fc.string({ unit: fc.constantFrom('a', 'b', 'c'), maxLength: 9 }),
        fc.string({ unit: fc.constantFrom('a', 'b', 'c'), maxLength: 9 }),
        fc.nat(4),
        (a, b, limit) => {
          const exact = referenceDistance(a, b);
          expect(editDistance(a, b)).toBe(exact);
          expect(editDistance(a, b, limit)).toBe(Math.min(exact, limit + 1));
        },
      ),
      { numRuns: 2000 },
    );
  });
});

describe('closestName', () => {
  it('suggests a close, unambiguous candidate only', () => {
    expect(closestName('rooof', ['roof', 'depot', 'drop'])).toBe('roof');
    expect(closestName('Roof', ['roof', 'depot'])).toBe('roof');
    expect(closestName('gaol', ['goal', 'failure', 'neutral'])).toBe('goal');
    expect(closestName('xyz', ['roof', 'depot'])).toBeUndefined();
    // Two equally close candidates: no guess.
    expect(closestName('ab', ['aa', 'bb'])).toBeUndefined();
    expect(closestName('roof', ['roof'])).toBeUndefined();
  });
});

describe('message helpers', () => {
  it('writes JSON paths readably', () => {
    expect(jsonPath([])).toBe('the spec');
    expect(jsonPath(['transitions', 3, 'to'])).toBe('transitions[3].to');
    expect(jsonPath(['states', 'dock 2', 'terminal'])).toBe('states["dock 2"].terminal');
  });

  it('writes numbers with six significant digits and short exponents', () => {
    expect(formatNumber(0.1 + 0.2)).toBe('0.3');
    expect(formatNumber(1e-15)).toBe('1e-15');
    expect(formatNumber(-2.5e12)).toBe('-2.5e12');
    expect(formatNumber(Number.POSITIVE_INFINITY)).toBe('infinity');
    expect(formatNumber(Number.NaN)).toBe('NaN');
  });
});
