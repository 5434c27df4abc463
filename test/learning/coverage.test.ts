/**
 * Small models with closed-form optimal values, given to learning as black boxes (only `sample`):
 * the 95% interval of the learned greedy policy's return must contain the exact optimal value in
 * at least 90 of 100 seeds. A normal-approximation 95% interval of an optimal policy's return
 * covers the value in about 95% of runs; a learned policy that is not optimal misses it.
 */
import { describe, expect, test } from 'vitest';
import { meanWithInterval } from '../../server/src/analysis/rollouts';
import type { ModelRng } from '../../server/src/sandbox/runtime';
import type { LearningMethod } from '../../server/src/analysis/rollout-stats';
import { DEFAULT_LEARNING, learnModel } from '../../server/src/sandbox/learn';

interface BlackBox {
  name: string;
  /** The exact optimal value of the start, in closed form (derivation beside each model). */
  optimal: number;
  discount: number;
  horizon?: number;
  /** Training steps per seed by method: Monte Carlo averages whole returns and needs more of them (common practice). */
  steps: Record<LearningMethod, number>;
  /** Measured episodes (fewer for the model whose episodes run to the discount's step cap). */
  evaluationEpisodes?: number;
  model: {
    start: unknown;
    actions: (state: unknown) => unknown;
    sample: (state: unknown, action: unknown, rng: ModelRng) => unknown;
  };
}

const MODELS: BlackBox[] = [
  {
    // One choice: a sure 1 or a 0.6 chance of 3. V* = max(1, 0.6 * 3) = 1.8.
    name: 'safe or risky bet',
    optimal: 1.8,
    discount: 1,
    steps: { 'q-learning': 2000, 'monte-carlo': 5000 },
    model: {
      start: 'choose',
      actions: () => ['safe', 'risky'],
      sample: (_s, action, rng) =>
        action === 'safe'
          ? { state: 'done', reward: 1, terminal: 'goal' }
          : rng.chance(0.6)
            ? { state: 'won', reward: 3, terminal: 'goal' }
            : { state: 'lost', reward: 0, terminal: 'failure' },
    },
  },
  {
    // Four cells to cross: `walk` costs 1 and advances with probability 1/2 (a geometric number of
    // tries, mean 2 per cell), `ride` costs 3 and always advances. V* = -4 * min(2, 3) = -8.
    name: 'slippery corridor',
    optimal: -8,
    discount: 1,
    steps: { 'q-learning': 10_000, 'monte-carlo': 40_000 },
    model: {
      start: 0,
      actions: () => ['walk', 'ride'],
      sample: (cell, action, rng) => {
        const next = action === 'ride' || rng.chance(0.5) ? (cell as number) + 1 : (cell as number);
        return { state: next, reward: action === 'ride' ? -3 : -1, terminal: next === 4 ? 'goal' : undefined };
      },
    },
  },
  {
    // Discount 0.8, no end: `stay` pays 2 or 0 with equal chance (mean 1) and stays, `leave` pays 4
    // and ends. V* = max(1 / (1 - 0.8), 4) = 5 (geometric series).
    name: 'stay or cash out',
    optimal: 5,
    discount: 0.8,
    steps: { 'q-learning': 10_000, 'monte-carlo': 40_000 },
    evaluationEpisodes: 300,
    model: {
      start: 'here',
      actions: () => ['stay', 'leave'],
      sample: (_s, action, rng) =>
        action === 'leave'
          ? { state: 'out', reward: 4, terminal: 'neutral' }
          : { state: 'here', reward: rng.chance(0.5) ? 2 : 0 },
    },
  },
  {
    // Horizon 3: `cash` pays 1 and stays poor, `invest` pays 0 and makes rich, where each step pays
    // 2 or 3 (mean 2.5). Backward induction: V(poor, 1) = 1, V(poor, 2) = max(1 + 1, 2.5) = 2.5,
    // V(poor, 3) = max(1 + 2.5, 0 + 2 * 2.5) = 5. The best action depends on the steps left.
    name: 'invest early',
    optimal: 5,
    discount: 1,
    horizon: 3,
    steps: { 'q-learning': 5000, 'monte-carlo': 15_000 },
    model: {
      start: 'poor',
      actions: (s) => (s === 'poor' ? ['cash', 'invest'] : ['collect']),
      sample: (s, action, rng) => {
        if (s === 'rich') return { state: 'rich', reward: rng.chance(0.5) ? 2 : 3 };
        return action === 'cash' ? { state: 'poor', reward: 1 } : { state: 'rich', reward: 0 };
      },
    },
  },
];

const SEEDS = 100;

function coverage(box: BlackBox, method: LearningMethod): number {
  let covered = 0;
  for (let seed = 1; seed <= SEEDS; seed++) {
    const run = learnModel(box.model, {
      settings: {
        ...DEFAULT_LEARNING,
        method,
        episodes: 20_000,
        steps: box.steps[method],
        evaluationEpisodes: box.evaluationEpisodes ?? 1000,
        decisionEpisodes: 0,
      },
      seed,
      discount: box.discount,
      horizon: box.horizon,
      stepCap: 10_000,
      maximize: true,
      declaredTerms: [],
    });
    expect(run.problem).toBeUndefined();
    const { lower, upper } = meanWithInterval(run.evaluation.returns);
    if (lower <= box.optimal && box.optimal <= upper) covered++;
  }
  return covered;
}

describe('the learned policy is optimal: its 95% interval holds the exact value in >= 90 of 100 seeds', () => {
  for (const box of MODELS) {
    for (const method of ['q-learning', 'monte-carlo'] as const) {
      test(`${box.name}, ${method}`, () => {
        expect(coverage(box, method)).toBeGreaterThanOrEqual(90);
      });
    }
  }
});
