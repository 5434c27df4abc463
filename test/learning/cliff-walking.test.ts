/**
 * Cliff walking, Sutton and Barto, "Reinforcement Learning: An Introduction", 2nd ed. (2018),
 * Example 6.6: Q-learning learns the optimal path, which runs along the edge of the cliff (return
 * -13: one step up, eleven right, one down), as the book describes beside Figure 6.4.
 */
import { describe, expect, test } from 'vitest';
import { DEFAULT_LEARNING, learnModel, type LearnJobOptions } from '../../server/src/sandbox/learn';
import { cliffActions, cliffStep, START, type Cell } from '../fixtures/learning/cliff-world';

const cliff = {
  start: START,
  actions: cliffActions,
  sample: (cell: unknown, action: unknown) => cliffStep(cell as Cell, action as string),
};

function options(seed: number): LearnJobOptions {
  return {
    settings: { ...DEFAULT_LEARNING, method: 'q-learning', evaluationEpisodes: 20, decisionEpisodes: 20 },
    seed,
    discount: 1,
    stepCap: 10_000,
    maximize: true,
    declaredTerms: [],
  };
}

/** The cells of the book's optimal path: up from the start, along row 2 to the right, down into the goal. */
const EDGE_PATH = [
  { row: 3, col: 0 },
  ...Array.from({ length: 12 }, (_, col) => ({ row: 2, col })),
  { row: 3, col: 11 },
].map((c) => JSON.stringify({ col: c.col, row: c.row }));

describe('cliff walking (Sutton and Barto 2nd ed., Example 6.6)', () => {
  for (const seed of [1, 2, 3]) {
    test(`Q-learning, seed ${seed}: the greedy policy returns -13 along the cliff edge`, () => {
      const run = learnModel(cliff, options(seed));
      expect(run.problem).toBeUndefined();
      // The environment is deterministic, so every measured episode follows the same path.
      expect(Array.from(run.evaluation.returns)).toEqual(new Array(20).fill(-13));
      expect(run.summary.path.keys).toEqual(EDGE_PATH);
      expect(run.summary.path.actions).toEqual(['up', ...new Array(11).fill('right'), 'down']);
      expect(run.summary.spent.steps).toBeLessThanOrEqual(DEFAULT_LEARNING.steps);
      // 38 cells can be stood on: 48 less the 10 cliff cells.
      expect(run.summary.distinctKeys).toBe(38);
    });
  }

  test('the same seed gives identical results; another seed gives other training draws', () => {
    const a = learnModel(cliff, options(7));
    const b = learnModel(cliff, options(7));
    expect(b).toEqual(a);
    const c = learnModel(cliff, options(8));
    expect(c.summary.states).not.toEqual(a.summary.states);
  });
});
