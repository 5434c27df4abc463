/**
 * The geometric-series bound: with discount < 1 and every reward in [-R, R], every value of every
 * policy satisfies |V| <= R / (1 - discount) (R. Sutton and A. Barto, Reinforcement Learning,
 * 2nd ed., 2018, eq. 3.10 with constant reward; M. Puterman, Markov Decision Processes, 1994,
 * section 6.1). Checked on seeded random MDPs of our own, and shown to be tight on a one-state
 * model that earns R forever.
 */
import { describe, expect, it } from 'vitest';
import { analyzeModel } from '../../server/src/analysis';
import { handModel, randomModel } from './gridworlds';

describe('geometric-series bound |V| <= R_max / (1 - discount)', () => {
  for (const discount of [0, 0.3, 0.9, 0.99]) {
    it(`holds for the optimal, worst and random bounds of random MDPs at discount ${discount}`, () => {
      for (let seed = 1; seed <= 8; seed++) {
        const model = randomModel(seed * 31, 20, 3, 4, discount, seed % 2);
        let rewardMax = 0;
        for (let k = 0; k < model.outcomeCount; k++) rewardMax = Math.max(rewardMax, Math.abs(model.outcomeReward[k]));
        const limit = rewardMax / (1 - discount);
        const analysis = analyzeModel(model, { precision: 1e-6 });
        for (const which of ['optimal', 'worst', 'random'] as const) {
          const { lower, upper } = analysis[which].values;
          for (let s = 0; s < model.stateCount; s++) {
            // The true value lies in [lower, upper], whose width is at most 1e-6.
            expect(upper[s], `${which}, seed ${seed}, state ${s}`).toBeGreaterThanOrEqual(-limit - 1e-6);
            expect(lower[s], `${which}, seed ${seed}, state ${s}`).toBeLessThanOrEqual(limit + 1e-6);
          }
        }
      }
    });
  }

  it('is attained by a state that earns R = 2 every step forever (discount 0.75: 2 / 0.25 = 8)', () => {
    const analysis = analyzeModel(
      handModel({ discount: 0.75, start: 's', states: ['s'], choices: [['s', 'earn', [['s', 1, 2]]]] }),
      { precision: 1e-6 },
    );
    expect(analysis.start.optimal.lower).toBeLessThanOrEqual(8);
    expect(analysis.start.optimal.upper).toBeGreaterThanOrEqual(8);
    expect(analysis.start.optimal.upper - analysis.start.optimal.lower).toBeLessThanOrEqual(1e-6);
  });
});
