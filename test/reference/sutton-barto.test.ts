/**
 * Checks against the printed value tables of R. Sutton and A. Barto, Reinforcement Learning:
 * An Introduction, 2nd ed., MIT Press, 2018. Every printed cell is checked: the analysis bounds
 * must contain a value that rounds to the printed number (within half a unit of the printed last
 * digit) and be at most 1e-6 wide.
 *
 * The tables are transcribed from the figures from memory; each cell agrees with the value the
 * book's own description of the example defines (the mathjs cross-check in
 * policy-evaluation.test.ts solves the same kind of linear system independently).
 */
import { describe, expect, it } from 'vitest';
import { analyzeModel } from '../../server/src/analysis';
import type { Bounds } from '../../server/src/analysis/types';
import type { CompiledModel } from '../../server/src/model/compiled';
import { cell, example35, example41 } from './gridworlds';

/** Asserts that [lower, upper] of every cell holds a value within half a printed unit of the table. */
function expectTable(
  model: CompiledModel,
  values: Bounds,
  table: number[][],
  halfUnit: number,
  stateOf: (r: number, c: number) => number,
): void {
  for (let r = 0; r < table.length; r++) {
    for (let c = 0; c < table[r].length; c++) {
      const s = stateOf(r, c);
      const lower = values.lower[s];
      const upper = values.upper[s];
      const where = `row ${r}, column ${c} (${model.stateIds[s]})`;
      expect(upper - lower, `width at ${where}`).toBeLessThanOrEqual(1e-6);
      // Some value in [lower, upper] lies in [printed - halfUnit, printed + halfUnit].
      expect(upper, `upper bound at ${where}`).toBeGreaterThanOrEqual(table[r][c] - halfUnit);
      expect(lower, `lower bound at ${where}`).toBeLessThanOrEqual(table[r][c] + halfUnit);
    }
  }
}

describe('Sutton and Barto (2018), Example 4.1: 4x4 gridworld, random policy, discount 1', () => {
  // Figure 4.1, value function of the equiprobable random policy at k = infinity (printed as integers).
  const figure41 = [
    [0, -14, -20, -22],
    [-14, -18, -20, -20],
    [-20, -20, -18, -14],
    [-22, -20, -14, 0],
  ];
  const model = example41();
  const analysis = analyzeModel(model, { precision: 1e-6 });
  const stateOf = (r: number, c: number): number =>
    (r === 0 && c === 0) || (r === 3 && c === 3) ? model.stateIndex.get('T')! : model.stateIndex.get(cell(r, c))!;

  it('bounds every cell of Figure 4.1 (k = infinity) to within 1e-6', () => {
    expectTable(model, analysis.random.values, figure41, 0.5, stateOf);
  });

  it('gives the negated expected number of steps as the random policy episode length (Example 4.1 text)', () => {
    // The book: the value "gives for each state the negation of the expected number of steps from that state until termination".
    for (let r = 0; r < 4; r++) {
      for (let c = 0; c < 4; c++) {
        const s = stateOf(r, c);
        expect(analysis.random.expectedLength[s]).toBeCloseTo(-figure41[r][c], 5);
      }
    }
  });

  it('ends every episode of the random policy in the terminal state with probability 1', () => {
    expect(analysis.start.reach.random.neutral).toBe(1);
    expect(analysis.start.reach.random.none).toBe(0);
  });
});

describe('Sutton and Barto (2018), Example 3.5: 5x5 gridworld, random policy, discount 0.9', () => {
  // Figure 3.2 (right), state-value function of the equiprobable random policy, one decimal.
  const figure32 = [
    [3.3, 8.8, 4.4, 5.3, 1.5],
    [1.5, 3.0, 2.3, 1.9, 0.5],
    [0.1, 0.7, 0.7, 0.4, -0.4],
    [-1.0, -0.4, -0.4, -0.6, -1.2],
    [-1.9, -1.3, -1.2, -1.4, -2.0],
  ];
  const model = example35();
  const analysis = analyzeModel(model, { precision: 1e-6 });
  const stateOf = (r: number, c: number): number => model.stateIndex.get(cell(r, c))!;

  it('bounds every cell of Figure 3.2 to within 1e-6', () => {
    expectTable(model, analysis.random.values, figure32, 0.05, stateOf);
  });
});

describe('Sutton and Barto (2018), Example 3.8: 5x5 gridworld, optimal values, discount 0.9', () => {
  // Figure 3.5 (middle), the optimal state-value function v*, one decimal.
  const figure35 = [
    [22.0, 24.4, 22.0, 19.4, 17.5],
    [19.8, 22.0, 19.8, 17.8, 16.0],
    [17.8, 19.8, 17.8, 16.0, 14.4],
    [16.0, 17.8, 16.0, 14.4, 13.0],
    [14.4, 16.0, 14.4, 13.0, 11.7],
  ];
  const model = example35();
  const analysis = analyzeModel(model, { precision: 1e-6 });
  const stateOf = (r: number, c: number): number => model.stateIndex.get(cell(r, c))!;

  it('bounds every cell of Figure 3.5 to within 1e-6', () => {
    expectTable(model, analysis.optimal.values, figure35, 0.05, stateOf);
  });

  it('marks the optimal actions of Figure 3.5 (right) as best: from A every action, elsewhere the arrows', () => {
    const bestActions = (r: number, c: number): string[] => {
      const s = stateOf(r, c);
      const out: string[] = [];
      for (let ch = model.choiceStart[s]; ch < model.choiceStart[s + 1]; ch++) {
        if (analysis.isBest[ch]) out.push(model.actionNames[model.choiceAction[ch]]);
      }
      return out.sort();
    };
    // Figure 3.5 (right): A and B jump whatever the action; the cell left of A points right,
    // the cell below A points up, and the bottom-left corner points up or right.
    expect(bestActions(0, 1)).toEqual(['down', 'left', 'right', 'up']);
    expect(bestActions(0, 3)).toEqual(['down', 'left', 'right', 'up']);
    expect(bestActions(0, 0)).toEqual(['right']);
    expect(bestActions(1, 1)).toEqual(['up']);
    expect(bestActions(4, 0)).toEqual(['right', 'up']);
  });

  it('has a policy whose greedy value is the optimal one: following it from A earns the optimal value', () => {
    const s = stateOf(0, 1);
    const c = analysis.optimal.policy![s];
    expect(analysis.q.lower[c]).toBeGreaterThanOrEqual(analysis.optimal.values.lower[s] - 1e-6);
  });
});
