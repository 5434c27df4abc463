import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  jsonLower,
  jsonProbability,
  jsonUpper,
  parseJsonNumber,
  roundDown,
  roundUp,
  textInterval,
  textProbability,
} from '../../server/src/cli/numbers';

/** Significant digits of a double's shortest decimal form (what JSON.stringify writes). */
function significantDigits(x: number): number {
  const mantissa = Math.abs(x).toExponential().split('e')[0].replace('.', '');
  return mantissa.replace(/0+$/, '').length;
}

describe('sound rounding of bounds', () => {
  const finite = fc.double({ noNaN: true, noDefaultInfinity: true });

  it('never rounds a lower bound up or an upper bound down (property, fast-check)', () => {
    fc.assert(
      fc.property(finite, (x) => {
        expect(roundDown(x)).toBeLessThanOrEqual(x);
        expect(roundUp(x)).toBeGreaterThanOrEqual(x);
      }),
      { numRuns: 5000 },
    );
  });

  it('keeps at most 10 significant digits and stays within one unit of the 10th digit (property)', () => {
    // Values whose 10-digit rounding is still a finite double; the extremes fall back to x itself.
    const moderate = fc.double({ min: -1e300, max: 1e300, noNaN: true }).filter((x) => Math.abs(x) > 1e-300);
    fc.assert(
      fc.property(moderate, (x) => {
        const unit = 10 ** (Math.floor(Math.log10(Math.abs(x))) - 9);
        for (const r of [roundDown(x), roundUp(x)]) {
          expect(significantDigits(r)).toBeLessThanOrEqual(10);
          expect(Math.abs(r - x)).toBeLessThanOrEqual(unit * (1 + 1e-9));
        }
      }),
      { numRuns: 5000 },
    );
  });

  it('rounds worked cases outward (hand-checked)', () => {
    expect(roundDown(8.412345678912)).toBe(8.412345678);
    expect(roundUp(8.412345678912)).toBe(8.412345679);
    expect(roundDown(-8.412345678912)).toBe(-8.412345679);
    expect(roundUp(-8.412345678912)).toBe(-8.412345678);
    // Rounding to nearest would give 1 here, above the value.
    expect(roundDown(0.99999999999)).toBe(0.9999999999);
    expect(roundUp(0.99999999999)).toBe(1);
    // Short decimals are kept as they are.
    expect(roundDown(0.1)).toBe(0.1);
    expect(roundUp(0.1)).toBe(0.1);
    expect(roundDown(-0)).toBe(0);
    expect(Object.is(roundUp(-0), 0)).toBe(true);
  });

  it('writes infinite bounds as "inf" / "-inf" and NaN as the uninformative side', () => {
    expect(jsonLower(-Infinity)).toBe('-inf');
    expect(jsonUpper(Infinity)).toBe('inf');
    expect(jsonLower(Infinity)).toBe('inf');
    expect(jsonUpper(-Infinity)).toBe('-inf');
    expect(jsonLower(Number.NaN)).toBe('-inf');
    expect(jsonUpper(Number.NaN)).toBe('inf');
    expect(parseJsonNumber('inf')).toBe(Infinity);
    expect(parseJsonNumber('-inf')).toBe(-Infinity);
    expect(parseJsonNumber(2.5)).toBe(2.5);
  });

  it('keeps probabilities within [0, 1]', () => {
    expect(jsonProbability(1 + 1e-15)).toBe(1);
    expect(jsonProbability(-1e-18)).toBe(0);
    expect(jsonProbability(0.123456789012345)).toBe(0.123456789);
  });

  it('writes a probability that is not known as "undetermined", never as a number', () => {
    expect(jsonProbability(NaN)).toBe('undetermined');
    expect(textProbability('undetermined')).toBe('undetermined');
  });
});

describe('numbers for people', () => {
  it('prints an interval once when both sound roundings agree, else both ends', () => {
    expect(textInterval(8.41, 8.41)).toBe('8.41');
    expect(textInterval(8.4123451, 8.4123461)).toBe('8.41234 .. 8.41235');
    expect(textInterval(-Infinity, 3)).toBe('-inf .. 3');
    // Large values keep every integer digit and one decimal: an exact figure must not read as a wide range.
    expect(textInterval(4499999.999, 4499999.999)).toBe('4499999.9 .. 4500000');
    expect(textInterval(-123456789.25, -123456789.25)).toBe('-123456789.3 .. -123456789.2');
    expect(textInterval(Infinity, Infinity)).toBe('inf');
  });

  it('keeps tiny non-zero probabilities visible', () => {
    expect(textProbability(0)).toBe('0');
    expect(textProbability(1e-9)).toBe('<0.0001');
    expect(textProbability(1 - 1e-9)).toBe('>0.9999');
    expect(textProbability(0.97)).toBe('0.97');
    expect(textProbability(1)).toBe('1');
  });
});
