import { lusolve } from 'mathjs';
import { describe, expect, test } from 'vitest';
import {
  END_GOAL,
  END_NONE,
  meanWithInterval,
  rolloutCompiledModel,
  summarizeEpisodes,
  Xoshiro128,
  type CompiledPolicy,
} from '../../server/src/analysis/rollouts';
import { ModelBuilder, type CompiledModel } from '../../server/src/model/compiled';

const span = { start: 0, end: 0 };

/** A random episodic MDP: `size` states, 2 actions each, 3 outcomes per action, a goal and a failure terminal. */
function randomMdp(seed: number, size: number, discount: number): CompiledModel {
  const random = new Xoshiro128(seed, 0);
  const builder = new ModelBuilder({ discount, maximize: true });
  for (let s = 0; s < size; s++) builder.addState(`s${s}`, undefined, span);
  const goal = builder.addState('goal', 'goal', span);
  const failure = builder.addState('failure', 'failure', span);
  for (let s = 0; s < size; s++) {
    for (const action of ['a', 'b']) {
      const weights = [random.nextFloat() + 0.1, random.nextFloat() + 0.1, random.nextFloat() + 0.1];
      const total = weights.reduce((x, y) => x + y, 0);
      const targets = [random.nextInt(size), random.nextFloat() < 0.5 ? goal : failure, random.nextInt(size)];
      builder.addChoice(
        s,
        action,
        -1,
        weights.map((w, i) => ({
          target: targets[i],
          probability: w / total,
          reward: Math.round((random.nextFloat() * 4 - 2) * 100) / 100,
        })),
      );
    }
  }
  return builder.finish([{ state: 0, probability: 1 }]);
}

/**
 * The value of a fixed policy by solving (I - discount * P_pi) v = r_pi with mathjs (a reference
 * linear solver outside the project); `weight(s, c)` is the policy's probability of choice c in s.
 */
function policyValue(model: CompiledModel, weight: (s: number, c: number) => number): number[] {
  const n = model.stateCount;
  const matrix: number[][] = Array.from({ length: n }, (_, i) =>
    Array.from({ length: n }, (_, j) => (i === j ? 1 : 0)),
  );
  const rhs: number[] = new Array(n).fill(0);
  for (let s = 0; s < n; s++) {
    for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
      const w = weight(s, c);
      for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
        const p = w * model.outcomeProb[k];
        rhs[s] += p * model.outcomeReward[k];
        if (model.terminal[model.outcomeTarget[k]] === 0) matrix[s][model.outcomeTarget[k]] -= model.discount * p;
      }
    }
  }
  return (lusolve(matrix, rhs) as number[][]).map((row) => row[0]);
}

function coverage(model: CompiledModel, policy: CompiledPolicy, exact: number, episodes: number): number {
  let covered = 0;
  for (let seed = 1; seed <= 200; seed++) {
    const records = rolloutCompiledModel(model, policy, { episodes, seed, stepCap: 10_000 });
    const estimate = meanWithInterval(records.returns);
    if (estimate.lower <= exact && exact <= estimate.upper) covered++;
  }
  return covered / 200;
}

describe('Monte Carlo mean against the exact value (coverage of the 1.96-standard-error interval over 200 seeds)', () => {
  const model = randomMdp(7, 6, 0.95);

  test('uniformly random policy: the interval covers the mathjs value in at least 93% of seeds', () => {
    const exact = policyValue(model, (s) => 1 / (model.choiceStart[s + 1] - model.choiceStart[s]))[0];
    const share = coverage(model, { kind: 'random' }, exact, 400);
    // A normal-approximation 95% interval should cover about 95% of the time (common practice);
    // a biased estimator (wrong discount, wrong outcome sampling) falls far below 93%.
    expect(share).toBeGreaterThanOrEqual(0.93);
  });

  test('a fixed stationary policy: same coverage', () => {
    const choice = Int32Array.from({ length: model.stateCount }, (_, s) =>
      model.terminal[s] ? -1 : model.choiceStart[s] + (s % 2),
    );
    const exact = policyValue(model, (s, c) => (c === choice[s] ? 1 : 0))[0];
    expect(coverage(model, { kind: 'stationary', choice }, exact, 400)).toBeGreaterThanOrEqual(0.93);
  });

  test('the check has teeth: rollouts of the model with another discount miss the value most of the time', () => {
    const exact = policyValue(model, (s) => 1 / (model.choiceStart[s + 1] - model.choiceStart[s]))[0];
    const shifted = { ...model, discount: 0.7 };
    expect(coverage(shifted, { kind: 'random' }, exact, 400)).toBeLessThan(0.5);
  });
});

describe('rollouts of compiled models', () => {
  test('a horizon cuts episodes (end "none"), and the random walk of Sutton and Barto (2nd ed., Example 6.2) ends right with probability 1/2 from C', () => {
    // Example 6.2: states A..E, start C, terminals at both ends, +1 only on the right exit; true values 1/6 .. 5/6.
    const builder = new ModelBuilder({ discount: 1, maximize: true });
    const names = ['left', 'A', 'B', 'C', 'D', 'E', 'right'];
    names.forEach((name, i) => builder.addState(name, i === 0 ? 'failure' : i === 6 ? 'goal' : undefined, span));
    for (let i = 1; i <= 5; i++)
      builder.addChoice(i, 'move', -1, [
        { target: i - 1, probability: 0.5, reward: 0 },
        { target: i + 1, probability: 0.5, reward: i + 1 === 6 ? 1 : 0 },
      ]);
    const walk = builder.finish([{ state: 3, probability: 1 }]);
    const stats = summarizeEpisodes(
      rolloutCompiledModel(walk, { kind: 'random' }, { episodes: 20_000, seed: 5, stepCap: 10_000 }),
      { policy: 'random', seed: 5, stepCap: 10_000 },
    );
    expect(stats.return.ci95.lower).toBeLessThanOrEqual(3 / 6);
    expect(stats.return.ci95.upper).toBeGreaterThanOrEqual(3 / 6);
    expect(stats.reach.goal).toBeCloseTo(stats.return.mean, 12);
    // Expected episode length of the symmetric walk from the middle of 5 states: 3 * 3 = 9 steps (gambler's ruin, k(N-k)).
    expect(Math.abs(stats.length.mean - 9)).toBeLessThan(0.3);

    const cut = rolloutCompiledModel(
      { ...walk, horizon: 2 },
      { kind: 'random' },
      { episodes: 1000, seed: 1, stepCap: 10_000 },
    );
    expect(Math.max(...cut.lengths)).toBe(2);
    expect(cut.ends.every((end) => end === END_NONE || end === END_GOAL || end === 2)).toBe(true);
    expect(cut.ends.filter((end) => end === END_NONE).length).toBeGreaterThan(0);
  });

  test('the same seed gives the same episodes', () => {
    const model = randomMdp(3, 5, 0.9);
    const a = rolloutCompiledModel(model, { kind: 'random' }, { episodes: 50, seed: 11, stepCap: 1000 });
    const b = rolloutCompiledModel(model, { kind: 'random' }, { episodes: 50, seed: 11, stepCap: 1000 });
    const c = rolloutCompiledModel(model, { kind: 'random' }, { episodes: 50, seed: 12, stepCap: 1000 });
    expect(Array.from(a.returns)).toEqual(Array.from(b.returns));
    expect(Array.from(a.returns)).not.toEqual(Array.from(c.returns));
  });
});
