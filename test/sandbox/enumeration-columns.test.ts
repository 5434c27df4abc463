/**
 * The enumeration's typed columns against an independent breadth-first listing written here with
 * plain arrays and a Map (the definition of the compiled layout: states in discovery order, choices
 * per state in action order, zero-probability outcomes dropped).
 */
import { describe, expect, it } from 'vitest';
import { Xoshiro128 } from '../../server/src/analysis/rollouts';
import { enumerateModel, type ModelFunctions } from '../../server/src/sandbox/runtime';

interface Out {
  state: number;
  probability: number;
  reward: number | Record<string, number>;
}

/** A seeded random MDP over integer states: the same seed gives the same model on every call. */
function randomModel(states: number, actions: number, outcomes: number, seed: number, terms: boolean): ModelFunctions {
  const rng = new Xoshiro128(seed);
  const table: Out[][][] = [];
  for (let s = 0; s < states; s++) {
    const row: Out[][] = [];
    for (let a = 0; a < actions; a++) {
      const weights = Array.from({ length: outcomes }, (_, o) => (o === 1 ? 0 : rng.nextFloat() + 0.01));
      const total = weights.reduce((x, y) => x + y, 0);
      row.push(
        weights.map((w, o) => {
          const r = Math.round(rng.nextFloat() * 100) / 10 - 5;
          return {
            state: Math.floor(rng.nextFloat() * states),
            probability: o === outcomes - 1 ? 1 - weights.slice(0, -1).reduce((x, y) => x + y / total, 0) : w / total,
            reward: terms ? { cost: r, bonus: o } : r,
          };
        }),
      );
    }
    table.push(row);
  }
  return {
    start: 0,
    terminal: (s: unknown) => ((s as number) === states - 1 ? 'goal' : undefined),
    actions: () => Array.from({ length: actions }, (_, a) => `a${a}`),
    outcomes: (s: unknown, action: unknown) => table[s as number][Number((action as string).slice(1))],
  } as unknown as ModelFunctions;
}

function reference(model: ModelFunctions) {
  const order: number[] = [0];
  const index = new Map<number, number>([[0, 0]]);
  const rows: Array<{ state: number; action: string; target: number; p: number; r: number }> = [];
  for (let i = 0; i < order.length; i++) {
    const s = order[i];
    if (model.terminal!(s)) continue;
    for (const action of model.actions!(s) as string[]) {
      for (const o of model.outcomes!(s, action) as Out[]) {
        if (o.probability === 0) continue;
        if (!index.has(o.state)) {
          index.set(o.state, order.length);
          order.push(o.state);
        }
        const r = typeof o.reward === 'number' ? o.reward : Object.values(o.reward).reduce((x, y) => x + y, 0);
        rows.push({ state: i, action, target: index.get(o.state)!, p: o.probability, r });
      }
    }
  }
  return { order, rows };
}

function listed(model: ModelFunctions, terms: string[]) {
  const e = enumerateModel(model, {
    stateCap: 1e6,
    declaredTerms: terms,
    recheckChoices: 10,
    progress: new Int32Array(4),
  });
  expect(e.problem).toBeUndefined();
  const rows: Array<{ state: number; action: string; target: number; p: number; r: number }> = [];
  for (let s = 0; s < e.stateKeys.length; s++) {
    for (let c = e.choiceStart[s]; c < e.choiceStart[s + 1]; c++) {
      for (let k = e.outcomeStart[c]; k < e.outcomeStart[c + 1]; k++) {
        rows.push({
          state: s,
          action: e.actionNames[e.choiceAction[c]],
          target: e.outcomeTarget[k],
          p: e.outcomeProb[k],
          r: e.outcomeReward[k],
        });
      }
    }
  }
  return { e, rows };
}

describe('enumeration into typed columns', () => {
  it('lists a seeded random model exactly as a plain breadth-first listing does', () => {
    const model = randomModel(3000, 4, 8, 7, false);
    const { order, rows } = reference(model);
    const { e, rows: got } = listed(model, []);
    expect(e.stateKeys).toEqual(order.map((s) => JSON.stringify(s)));
    expect(got).toEqual(rows);
    expect(e.outcomesListed).toBe(rows.length);
    // Columns are exact-size copies, not views of a larger buffer (structured clone would carry the slack).
    expect(e.outcomeTarget.buffer.byteLength).toBe(rows.length * 4);
    expect(e.outcomeProb.buffer.byteLength).toBe(rows.length * 8);
  });

  it('keeps each declared term in its own column that sums to the reward', () => {
    const model = randomModel(500, 3, 5, 11, true);
    const { rows } = reference(model);
    const { e, rows: got } = listed(model, ['cost', 'bonus']);
    expect(got).toEqual(rows);
    expect(e.termNames).toEqual(['cost', 'bonus']);
    for (let k = 0; k < e.outcomesListed; k++)
      expect(e.termRewards[0][k] + e.termRewards[1][k]).toBeCloseTo(e.outcomeReward[k], 12);
  });
});
