/**
 * The sweeps on a copy laid out in sweep order (analysis/sweep-layout.ts) against the sweeps on
 * the model as written: the same bounds bit for bit, for every way of combining choices, with an
 * allowed set and with collapsed nodes; and the random policy's values inside the bounds against
 * mathjs `lusolve` on (I - discount P) v = r.
 */
import { lusolve } from 'mathjs';
import { describe, expect, it } from 'vitest';
import {
  COMBINE_AVERAGE,
  COMBINE_MAX,
  COMBINE_MIN,
  COMBINE_POLICY,
  solveBounds,
  type Combine,
  type Nodes,
  type Operator,
  type SolveOptions,
  type SweepModel,
} from '../../server/src/analysis/interval-iteration';
import { packInSweepOrder, solveBoundsOnCopy } from '../../server/src/analysis/sweep-layout';
import { seededRandom as rng } from '../reference/gridworlds';

/** A random model: `states` states, the last `ends` of them without choices (their values stay fixed at 0). */
function randomModel(
  random: () => number,
  states: number,
  ends: number,
  actions: number,
  outcomes: number,
): SweepModel {
  const choiceStart = new Int32Array(states + 1);
  for (let s = 0; s < states; s++) choiceStart[s + 1] = choiceStart[s] + (s < states - ends ? actions : 0);
  const choices = choiceStart[states];
  const outcomeStart = new Int32Array(choices + 1);
  for (let c = 0; c < choices; c++) outcomeStart[c + 1] = outcomeStart[c] + outcomes;
  const outcomeTarget = new Int32Array(choices * outcomes);
  const outcomeProb = new Float64Array(choices * outcomes);
  for (let c = 0; c < choices; c++) {
    let total = 0;
    for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) total += outcomeProb[k] = 0.05 + random();
    for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) {
      outcomeProb[k] /= total;
      outcomeTarget[k] = Math.floor(random() * states);
    }
  }
  return { stateCount: states, choiceStart, outcomeStart, outcomeTarget, outcomeProb };
}

/** The states with choices in a shuffled order, grouped into nodes of `group` members each. */
function shuffledNodes(random: () => number, swept: number, group: number): Nodes {
  const members = Int32Array.from({ length: swept }, (_, i) => i);
  for (let i = swept - 1; i > 0; i--) {
    const j = Math.floor(random() * (i + 1));
    [members[i], members[j]] = [members[j], members[i]];
  }
  const count = Math.ceil(swept / group);
  const start = Int32Array.from({ length: count + 1 }, (_, i) => Math.min(swept, i * group));
  return { count, start, members, stay: new Uint8Array(count) };
}

const OPTIONS: SolveOptions = { precision: 1e-9, acyclic: false, maxSweeps: 100_000 };

describe('sweeps on a copy in sweep order', () => {
  const cases: Array<[string, Combine, number]> = [
    ['best values', COMBINE_MAX, 1],
    ['worst values', COMBINE_MIN, 1],
    ['random policy', COMBINE_AVERAGE, 1],
    ['a fixed policy', COMBINE_POLICY, 1],
    ['best values over collapsed nodes of three', COMBINE_MAX, 3],
  ];
  for (const [name, combine, group] of cases) {
    it(`${name}: the same bounds, bit for bit`, () => {
      const random = rng(17);
      const states = 400;
      const ends = 40;
      const model = randomModel(random, states, ends, 3, 4);
      const choices = model.choiceStart[states];
      const reward = Float64Array.from({ length: choices }, () => 2 * random() - 1);
      const allowed = Uint8Array.from({ length: choices }, (_, c) => (c % 3 === 2 && random() < 0.5 ? 0 : 1));
      const policy = Int32Array.from({ length: states }, (_, s) =>
        s < states - ends ? model.choiceStart[s] + (s % 3) : -1,
      );
      const op: Operator = {
        model,
        combine,
        reward,
        discount: 0.95,
        allowed: combine === COMBINE_POLICY ? undefined : allowed,
        policy: combine === COMBINE_POLICY ? policy : undefined,
      };
      const nodes = shuffledNodes(random, states - ends, group);
      const written = new Float64Array(2 * states);
      const copied = new Float64Array(2 * states);
      const plain = solveBounds(op, nodes, written, OPTIONS);
      const onCopy = solveBoundsOnCopy(op, nodes, copied, OPTIONS);
      expect(onCopy.sweeps).toBe(plain.sweeps);
      expect(onCopy.sweeps).toBeGreaterThan(10);
      expect(Array.from(copied)).toEqual(Array.from(written));
    });
  }

  it("the random policy's bounds hold mathjs' solution of (I - discount P) v = r", () => {
    const random = rng(29);
    const states = 120;
    const model = randomModel(random, states, 10, 2, 3);
    const choices = model.choiceStart[states];
    const reward = Float64Array.from({ length: choices }, () => random());
    const discount = 0.9;
    const op: Operator = { model, combine: COMBINE_AVERAGE, reward, discount };
    const bounds = new Float64Array(2 * states);
    solveBoundsOnCopy(op, shuffledNodes(random, states - 10, 1), bounds, OPTIONS);
    // The uniformly random policy's chain over every state; ending states keep the value 0.
    const matrix = Array.from({ length: states }, (_, i) =>
      Array.from({ length: states }, (_, j) => (i === j ? 1 : 0)),
    );
    const rhs = new Array<number>(states).fill(0);
    for (let s = 0; s < states; s++) {
      const first = model.choiceStart[s];
      const end = model.choiceStart[s + 1];
      for (let c = first; c < end; c++) {
        rhs[s] += reward[c] / (end - first);
        for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++)
          matrix[s][model.outcomeTarget[k]] -= (discount * model.outcomeProb[k]) / (end - first);
      }
    }
    const truth = (lusolve(matrix, rhs) as number[][]).map((row) => row[0]);
    for (let s = 0; s < states; s++) {
      expect(bounds[2 * s]).toBeLessThanOrEqual(truth[s] + 1e-12);
      expect(bounds[2 * s + 1]).toBeGreaterThanOrEqual(truth[s] - 1e-12);
      expect(bounds[2 * s + 1] - bounds[2 * s]).toBeLessThanOrEqual(1e-8);
    }
  });

  it('renumbers the swept states first, in sweep order, and keeps each choice with its state', () => {
    const random = rng(3);
    const model = randomModel(random, 50, 5, 2, 2);
    const reward = Float64Array.from({ length: model.choiceStart[50] }, (_, c) => c);
    const nodes = shuffledNodes(random, 45, 1);
    const packed = packInSweepOrder({ model, combine: COMBINE_MAX, reward, discount: 0.9 }, nodes);
    expect(Array.from(packed.stateOf.subarray(0, 45))).toEqual(Array.from(nodes.members));
    for (let t = 0; t < 45; t++) {
      const s = packed.stateOf[t];
      const c = packed.op.model.choiceStart[t];
      // Rewards were numbered by original choice: the copy's first choice of t is s's first choice.
      expect(packed.op.reward[c]).toBe(model.choiceStart[s]);
      expect(packed.stateOf[packed.op.model.outcomeTarget[packed.op.model.outcomeStart[c]]]).toBe(
        model.outcomeTarget[model.outcomeStart[model.choiceStart[s]]],
      );
    }
    for (let t = 45; t < 50; t++) expect(packed.op.model.choiceStart[t + 1] - packed.op.model.choiceStart[t]).toBe(0);
  });
});
