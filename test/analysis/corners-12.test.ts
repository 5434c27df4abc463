/**
 * Regression cases of issue 12: figures that came out wrong in corners (terminals under a horizon,
 * shares of a zero total). Expected values are derived by hand beside each check.
 */
import { describe, expect, it } from 'vitest';
import { checkSpec } from '../helpers/specs';

/** The example, with the start given: a leads to a goal, f is a failure terminal. */
function terminalStartSpec(start: string, horizon?: number): object {
  return {
    discount: 0.9,
    ...(horizon !== undefined ? { horizon } : {}),
    start,
    actions: ['go'],
    states: { a: {}, g: { terminal: 'goal' }, f: { terminal: 'failure' } },
    transitions: [{ from: 'a', action: 'go', to: 'g', reward: 1 }],
  };
}

describe('terminals with a horizon read as without one', () => {
  it('a start on a failure terminal has ended in failure (probability 1), with or without a horizon', () => {
    // By hand: the episode is over before any step, in f; no goal can be reached from f.
    for (const horizon of [3, undefined]) {
      const start = checkSpec(terminalStartSpec('f', horizon)).analysis!.start;
      expect(start.reach.optimal).toEqual({ goal: 0, failure: 1, neutral: 0, none: 0 });
      expect(start.reach.random).toEqual({ goal: 0, failure: 1, neutral: 0, none: 0 });
      expect(start.maxGoalReach).toBe(0);
      expect(start.expectedLength.optimal).toBe(0);
      expect(start.optimal).toEqual({ lower: 0, upper: 0 });
    }
  });

  it('a goal terminal has maxGoalReach 1 and a start on it has ended in a goal', () => {
    // By hand: g is the goal itself; a enters g on its one step, within any horizon >= 1.
    for (const horizon of [1, 3, undefined]) {
      const report = checkSpec(terminalStartSpec('g', horizon));
      const analysis = report.analysis!;
      const index = (name: string) => report.model!.stateIndex.get(name)!;
      expect(analysis.start.reach.optimal).toEqual({ goal: 1, failure: 0, neutral: 0, none: 0 });
      expect(analysis.start.maxGoalReach).toBe(1);
      expect(analysis.maxGoalReach[index('g')]).toBe(1);
      expect(analysis.maxGoalReach[index('f')]).toBe(0);
      expect(analysis.maxGoalReach[index('a')]).toBe(1);
      expect(analysis.optimal.reach.goal[index('a')]).toBe(1);
      expect(analysis.optimal.reach.none[index('a')]).toBe(0);
    }
  });

  it('entering a terminal is still counted once: a two-step corridor reaches the goal with probability 1, not 2', () => {
    // By hand: a -> b -> g takes 2 steps; within a horizon of 2 the goal is reached surely, within 1 never.
    const spec = (horizon: number) => ({
      discount: 1,
      horizon,
      start: 'a',
      actions: ['go'],
      states: { a: {}, b: {}, g: { terminal: 'goal' } },
      transitions: [
        { from: 'a', action: 'go', to: 'b', reward: 0 },
        { from: 'b', action: 'go', to: 'g', reward: 1 },
      ],
    });
    expect(checkSpec(spec(2)).analysis!.start.reach.optimal).toEqual({ goal: 1, failure: 0, neutral: 0, none: 0 });
    expect(checkSpec(spec(2)).analysis!.start.maxGoalReach).toBe(1);
    expect(checkSpec(spec(1)).analysis!.start.reach.optimal).toEqual({ goal: 0, failure: 0, neutral: 0, none: 1 });
    expect(checkSpec(spec(1)).analysis!.start.maxGoalReach).toBe(0);
  });
});

describe('shares of reward terms that cancel', () => {
  /**
   * a moves on to b with probability 0.3 (bonus +0.1) and stays with 0.7 (fee +0.3); b ends at the goal
   * with bonus -0.1 and fee `fee`. The stays before leaving are geometric: 0.7 / 0.3 = 7/3 on average
   * (closed form of the geometric distribution), so bonus totals 0.1 - 0.1 = 0 and fee totals
   * 0.3 * 7/3 + fee = 0.7 + fee.
   */
  const spec = (fee: number) => ({
    discount: 1,
    start: 'a',
    actions: ['go'],
    rewardTerms: { bonus: { direction: 'either' }, fee: { direction: 'either' } },
    states: { a: {}, b: {}, g: { terminal: 'goal' } },
    transitions: [
      {
        from: 'a',
        action: 'go',
        to: [
          { state: 'b', probability: 0.3, reward: { bonus: 0.1 } },
          { state: 'a', probability: 0.7, reward: { fee: 0.3 } },
        ],
      },
      { from: 'b', action: 'go', to: [{ state: 'g', probability: 1, reward: { bonus: -0.1, fee } }] },
    ],
  });
  const shares = (fee: number) => Object.fromEntries(checkSpec(spec(fee)).analysis!.termShares.map((t) => [t.term, t]));

  it('terms that both total 0 have share 0, not +-1 from rounding noise', () => {
    const { bonus, fee } = shares(-0.7);
    expect(Math.abs(bonus.value)).toBeLessThanOrEqual(1e-6);
    expect(Math.abs(fee.value)).toBeLessThanOrEqual(1e-6);
    expect(bonus.share).toBe(0);
    expect(fee.share).toBe(0);
  });

  it('a term that totals 0 beside one that does not: shares 0 and 1', () => {
    // fee totals 0.7 - 0.4 = 0.3.
    const { bonus, fee } = shares(-0.4);
    expect(fee.value).toBeCloseTo(0.3, 6);
    expect(bonus.share).toBe(0);
    expect(fee.share).toBe(1);
  });
});
