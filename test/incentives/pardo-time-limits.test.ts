/**
 * Pardo, Tavakoli, Levdik and Kormushev (2018), "Time limits in reinforcement learning" (ICML): when the
 * time limit is part of the task, the optimal policy depends on the time left, so an agent that does not
 * observe time cannot represent it. The case below is of our own: a delivery robot in a corridor with a
 * small tip two cells to the left and a large payment four cells to the right; moving right fails 30% of
 * the time (a crowded corridor). With plenty of time it goes right; after enough failed moves there is no
 * longer time to reach the right end and it turns left.
 */
import { describe, expect, it } from 'vitest';
import { checkSpec, findingsOf } from '../helpers/specs';

function corridor(horizon?: number): object {
  const cells = ['c0', 'c1', 'c2', 'c3', 'c4'];
  const states: Record<string, object> = { tip: { terminal: 'goal' }, pay: { terminal: 'goal' } };
  for (const c of cells) states[c] = {};
  const left = (i: number) => (i === 0 ? 'tip' : cells[i - 1]);
  const right = (i: number) => (i === 4 ? 'pay' : cells[i + 1]);
  const reward = (target: string) => (target === 'tip' ? 1 : target === 'pay' ? 10 : 0);
  const transitions = cells.flatMap((c, i) => [
    { from: c, action: 'left', to: left(i), reward: reward(left(i)) },
    {
      from: c,
      action: 'right',
      to: [
        { state: right(i), probability: 0.7, reward: reward(right(i)) },
        { state: c, probability: 0.3, reward: 0 },
      ],
    },
  ]);
  return {
    name: 'corridor',
    discount: 1,
    ...(horizon ? { horizon } : {}),
    start: 'c1',
    actions: ['left', 'right'],
    states,
    transitions,
  };
}

describe('Pardo et al. (2018): the optimal action depends on the time left', () => {
  it('with a time limit of 8 steps, the best action at c1 flips from right to left', () => {
    const report = checkSpec(corridor(8));
    const found = findingsOf(report, 'time-dependent-optimum');
    expect(found).toHaveLength(1);
    const message = found[0].message;
    expect(message).toContain("at 'c1'");
    expect(message).toMatch(/it is 'right'.*it is 'left'/);
    // Check the flip against an independent backward induction over (steps left, cell).
    const flip = Number(/with (\d+) steps? left it is 'left'/.exec(message)![1]);
    const value = (k: number, i: number): number => {
      if (k === 0) return 0;
      const go = (j: number, r: number) => r + (j < 0 || j > 4 ? 0 : value(k - 1, j));
      const leftValue = go(i - 1, i === 0 ? 1 : 0);
      const rightValue = 0.7 * go(i + 1, i === 4 ? 10 : 0) + 0.3 * value(k - 1, i);
      return Math.max(leftValue, rightValue);
    };
    const bestAtC1 = (k: number) => {
      const leftValue = value(k - 1, 0);
      const rightValue = 0.7 * value(k - 1, 2) + 0.3 * value(k - 1, 1);
      return rightValue > leftValue ? 'right' : 'left';
    };
    expect(bestAtC1(8)).toBe('right');
    expect(bestAtC1(flip)).toBe('left');
    expect(bestAtC1(flip + 1)).toBe('right');
  });

  it('without the time limit the optimum is stationary and the rule is quiet', () => {
    expect(findingsOf(checkSpec(corridor()), 'time-dependent-optimum')).toEqual([]);
  });
});
