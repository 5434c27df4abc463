import { describe, expect, test } from 'vitest';
import { Xoshiro128, histogramOf, meanWithInterval, quantileSorted } from '../../server/src/analysis/rollouts';

/**
 * Expected outputs come from test/rollouts/reference/xoshiro128starstar.c: the xoshiro128** 1.1
 * algorithm of Blackman and Vigna and SplitMix64 of Steele, Lea and Flood, written in C with
 * native unsigned 32/64-bit arithmetic (compiled with gcc and run once; its output is pasted here).
 */
describe('xoshiro128** seeded by SplitMix64 (against the C program in reference/)', () => {
  const cases: Array<[number, number, number[]]> = [
    [1, 0, [3857403066, 3761880522, 2833589495, 1190737128, 4014693229, 145220835]],
    [1, 1, [4031584720, 1012464676, 698777500, 3555081809, 1697140873, 3834283712]],
    [42, 7, [3218433758, 3595279162, 1425948380, 2234227796, 3618828505, 1879865849]],
    [4294967295, 123456, [2089638963, 1940799057, 1403403346, 464291592, 1410671434, 1576464854]],
  ];
  for (const [seed, episode, expected] of cases) {
    test(`seed ${seed}, episode ${episode}`, () => {
      const generator = new Xoshiro128(seed, episode);
      expect(Array.from({ length: expected.length }, () => generator.nextUint32())).toEqual(expected);
    });
  }

  test('episodes are reproducible on their own, whatever ran before', () => {
    const a = new Xoshiro128(9, 5);
    const b = new Xoshiro128(9, 0);
    for (let i = 0; i < 100; i++) b.nextFloat();
    b.seedEpisode(9, 5);
    expect(Array.from({ length: 10 }, () => a.nextFloat())).toEqual(Array.from({ length: 10 }, () => b.nextFloat()));
  });

  test('the policy stream (1) differs from the model stream (0) of the same episode', () => {
    const model = new Xoshiro128(3, 4, 0);
    const policy = new Xoshiro128(3, 4, 1);
    expect(model.nextUint32()).not.toBe(policy.nextUint32());
  });

  test('floats are uniform on [0, 1): chi-square over 20 bins below the 0.999 quantile (43.82, 19 degrees of freedom)', () => {
    const generator = new Xoshiro128(2024, 0);
    const counts = new Array<number>(20).fill(0);
    const n = 200_000;
    let outside = 0;
    for (let i = 0; i < n; i++) {
      const u = generator.nextFloat();
      if (!(u >= 0 && u < 1)) outside++;
      else counts[Math.floor(u * 20)]++;
    }
    expect(outside).toBe(0);
    const expected = n / 20;
    const chiSquare = counts.reduce((sum, c) => sum + (c - expected) ** 2 / expected, 0);
    // 43.82 is the 0.999 quantile of the chi-square distribution with 19 degrees of freedom (standard tables).
    expect(chiSquare).toBeLessThan(43.82);
  });
});

describe('statistics', () => {
  test('quantiles follow Hyndman and Fan definition 7 (R quantile(1:10, c(.05,.25,.5,.75,.95)) = 1.45 3.25 5.5 7.75 9.55)', () => {
    const data = Float64Array.from({ length: 10 }, (_, i) => i + 1);
    expect([0.05, 0.25, 0.5, 0.75, 0.95].map((p) => quantileSorted(data, p))).toEqual(
      [1.45, 3.25, 5.5, 7.75, 9.55].map((x) => expect.closeTo(x, 12)),
    );
  });

  test('mean, standard error and the 1.96-standard-error interval', () => {
    // Sample 2, 4, 4, 4, 5, 5, 7, 9: mean 5, sample variance 32/7 (common practice: n - 1 in the denominator).
    const estimate = meanWithInterval([2, 4, 4, 4, 5, 5, 7, 9]);
    const se = Math.sqrt(32 / 7 / 8);
    expect(estimate.mean).toBe(5);
    expect(estimate.standardError).toBeCloseTo(se, 12);
    expect(estimate.lower).toBeCloseTo(5 - 1.96 * se, 12);
    expect(estimate.upper).toBeCloseTo(5 + 1.96 * se, 12);
  });

  test('histogram bins cover the range and count every value', () => {
    const histogram = histogramOf(Float64Array.from([0, 0.5, 1, 9.99, 10]), 10);
    expect(histogram.counts.reduce((a, b) => a + b, 0)).toBe(5);
    expect(histogram.counts[0]).toBe(2);
    expect(histogram.counts[9]).toBe(2);
    expect([histogram.lower, histogram.upper]).toEqual([0, 10]);
  });
});
