/**
 * Regression cases of values that came out unsound or undecided (hand-derived values; minimal
 * specs of our own).
 */
import { describe, expect, it } from 'vitest';
import { checkSpec } from '../helpers/specs';

function startValue(spec: object): { lower: number; upper: number } {
  const report = checkSpec(spec);
  return report.analysis!.start.optimal;
}

describe('values in corner cases', () => {
  it('shaping at discount 1 with a state that can stay forever: V*(a) = 0 (staying earns 1*Phi(a) - Phi(a) = 0 a step), not -1', () => {
    const value = startValue({
      discount: 1,
      start: 'a',
      actions: ['stay', 'end'],
      states: { a: {}, g: { terminal: 'goal' } },
      shaping: { potential: { a: 1 } },
      transitions: [
        { from: 'a', action: 'stay', to: 'a', reward: 0 },
        { from: 'a', action: 'end', to: 'g', reward: 0 },
      ],
    });
    expect(value.lower).toBeLessThanOrEqual(0);
    expect(value.upper).toBeGreaterThanOrEqual(0);
    expect(value.upper - value.lower).toBeLessThanOrEqual(1e-6);
  });

  it('an end component of best mean exactly 0 with non-zero rewards: V*(a) = 0, V*(b) = 1, not [-inf, inf]', () => {
    const report = checkSpec({
      objective: 'minimize',
      discount: 1,
      start: 'a',
      actions: ['wait', 'go'],
      states: { a: {}, b: {}, g: { terminal: 'goal' } },
      transitions: [
        { from: 'a', action: 'wait', to: 'a', reward: 0 },
        { from: 'a', action: 'go', to: 'b', reward: -1 },
        { from: 'b', action: 'wait', to: 'a', reward: 2 },
        { from: 'b', action: 'go', to: 'g', reward: 1 },
      ],
    });
    const { lower, upper } = report.analysis!.optimal.values;
    const [a, b] = [report.model!.stateIndex.get('a')!, report.model!.stateIndex.get('b')!];
    // By hand: V(b) = min(2 + V(a), 1), V(a) = min(0 + V(a), -1 + V(b)) with "wait forever" worth 0.
    expect(lower[a]).toBeLessThanOrEqual(0);
    expect(upper[a]).toBeGreaterThanOrEqual(0);
    expect(upper[a] - lower[a]).toBeLessThanOrEqual(1e-6);
    expect(lower[b]).toBeLessThanOrEqual(1);
    expect(upper[b]).toBeGreaterThanOrEqual(1);
    expect(upper[b] - lower[b]).toBeLessThanOrEqual(1e-6);
  });
});
