/**
 * The intervals behind "survives the sampling error": Wilson's score interval against the worked
 * examples of Newcombe, "Two-sided confidence intervals for the single proportion: comparison of
 * seven methods", Statistics in Medicine 17 (1998), Table II, method 3 (from memory, and the 0/n
 * rows checked against the closed form z^2 / (n + z^2)); Hoeffding's bound against its theorem
 * (coverage of at least 1 - delta) on seeded Bernoulli samples.
 */
import { describe, expect, it } from 'vitest';
import { Xoshiro128 } from '../../server/src/analysis/rollouts';
import { hoeffdingHalfWidth, wilsonInterval } from '../../server/src/model/empirical';

describe('Wilson score interval (Wilson 1927)', () => {
  const rows: Array<[number, number, number, number]> = [
    [81, 263, 0.2553, 0.3662],
    [15, 148, 0.0624, 0.1605],
    [0, 20, 0, 0.1611],
    [1, 29, 0.0061, 0.1718],
  ];
  for (const [x, n, lower, upper] of rows) {
    it(`${x}/${n} gives [${lower}, ${upper}] (Newcombe 1998, Table II)`, () => {
      const interval = wilsonInterval(x, n);
      expect(interval.lower).toBeCloseTo(lower, 4);
      expect(interval.upper).toBeCloseTo(upper, 4);
    });
  }

  it('no success in n trials: upper end z^2 / (n + z^2) (closed form)', () => {
    const z2 = 1.959963984540054 ** 2;
    for (const n of [1, 10, 30, 1000]) expect(wilsonInterval(0, n).upper).toBeCloseTo(z2 / (n + z2), 12);
  });

  it('is symmetric: x of n mirrors n - x of n', () => {
    const a = wilsonInterval(7, 30);
    const b = wilsonInterval(23, 30);
    expect(a.lower).toBeCloseTo(1 - b.upper, 12);
    expect(a.upper).toBeCloseTo(1 - b.lower, 12);
  });
});

describe("Hoeffding's bound (Hoeffding 1963, Theorem 2)", () => {
  it('the mean of n samples in [0, 1] misses the true mean by more than the bound in at most delta of the runs', () => {
    const rng = new Xoshiro128(11);
    const n = 40;
    const p = 0.3;
    const half = hoeffdingHalfWidth(1, n, 0.05);
    let misses = 0;
    const runs = 4000;
    for (let r = 0; r < runs; r++) {
      let sum = 0;
      for (let i = 0; i < n; i++) sum += rng.nextFloat() < p ? 1 : 0;
      if (Math.abs(sum / n - p) > half) misses++;
    }
    expect(misses / runs).toBeLessThanOrEqual(0.05);
    // The bound is not vacuous: it is narrower than the whole range.
    expect(half).toBeLessThan(0.5);
  });

  it('scales with the range and shrinks as 1/sqrt(n)', () => {
    expect(hoeffdingHalfWidth(4, 100)).toBeCloseTo(4 * hoeffdingHalfWidth(1, 100), 12);
    expect(hoeffdingHalfWidth(1, 400)).toBeCloseTo(hoeffdingHalfWidth(1, 100) / 2, 12);
  });
});
