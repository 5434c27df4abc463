/**
 * Policy evaluation cross-checked against an independent linear solver (mathjs `lusolve`): the
 * value of a stationary policy is the solution of (I - discount * P_pi) v = r_pi (Bellman's
 * equation for a fixed policy; M. Puterman, Markov Decision Processes, 1994, section 6.1), and the
 * optimal value is the best such solution over deterministic policies (Puterman 1994, Theorem
 * 6.2.7: a deterministic stationary optimal policy exists for finite discounted MDPs).
 * The random MDPs are seeded models of our own.
 */
import { describe, expect, it } from 'vitest';
import { analyzeModel } from '../../server/src/analysis';
import type { Analysis } from '../../server/src/analysis/types';
import type { CompiledModel } from '../../server/src/model/compiled';
import { allPolicies, evaluate, properModel, uniform } from '../helpers/policy-values';
import { randomModel, seededRandom } from './gridworlds';
import { ModelBuilder } from '../../server/src/model/compiled';

function expectInside(values: { lower: Float64Array; upper: Float64Array }, exact: number[], label: string): void {
  for (let s = 0; s < exact.length; s++) {
    const slack = 1e-9 * Math.max(1, Math.abs(exact[s]));
    expect(values.lower[s], `${label}: lower bound of state ${s}`).toBeLessThanOrEqual(exact[s] + slack);
    expect(values.upper[s], `${label}: upper bound of state ${s}`).toBeGreaterThanOrEqual(exact[s] - slack);
    expect(values.upper[s] - values.lower[s], `${label}: width at state ${s}`).toBeLessThanOrEqual(
      1e-6 * Math.max(1, Math.abs(exact[s]) / 1000),
    );
  }
}

/** The policy as weights: 1 on its choice. */
const following = (policy: Int32Array) => (s: number, c: number) => (policy[s] === c ? 1 : 0);

const discounts = [0, 0.5, 0.9, 0.99];

describe('policy evaluation against mathjs lusolve on seeded random MDPs (discount < 1)', () => {
  for (let seed = 1; seed <= 24; seed++) {
    const discount = discounts[seed % discounts.length];
    const model = randomModel(seed, 6 + (seed % 7), 2 + (seed % 3), 3, discount, seed % 3, seed % 2 === 0);
    it(`seed ${seed}, ${model.stateCount} states, discount ${discount}: random policy values`, () => {
      const analysis = analyzeModel(model, { precision: 1e-6 });
      expectInside(analysis.random.values, evaluate(model, uniform(model)), 'random policy');
    });
    it(`seed ${seed}: the returned optimal and worst policies attain the optimal and worst bounds`, () => {
      const analysis = analyzeModel(model, { precision: 1e-6 });
      expectInside(analysis.optimal.values, evaluate(model, following(analysis.optimal.policy!)), 'optimal policy');
      expectInside(analysis.worst.values, evaluate(model, following(analysis.worst.policy!)), 'worst policy');
    });
  }
});

describe('discounts near 1, continuing and episodic (mathjs lusolve)', () => {
  for (let seed = 401; seed <= 408; seed++) {
    const discount = seed % 2 === 0 ? 0.999 : 0.995;
    // Even seeds: continuing (no terminal); odd seeds: three goal terminals.
    const model = randomModel(seed, 40, 3, 4, discount, seed % 2 === 0 ? 0 : 3, seed % 4 < 2);
    it(`seed ${seed}, discount ${discount}: random and optimal policy values`, () => {
      const analysis = analyzeModel(model, { precision: 1e-6 });
      expectInside(analysis.random.values, evaluate(model, uniform(model)), 'random policy');
      expectInside(analysis.optimal.values, evaluate(model, following(analysis.optimal.policy!)), 'optimal policy');
    });
  }
});

describe('optimal values against brute force over every deterministic policy (mathjs lusolve)', () => {
  for (let seed = 101; seed <= 106; seed++) {
    const discount = [0.5, 0.9, 0.95][seed % 3];
    const model = randomModel(seed, 6, 3, 3, discount, 1, seed % 2 === 1);
    it(`seed ${seed}: per state, V* is the best value of any deterministic policy (discount ${discount})`, () => {
      const analysis: Analysis = analyzeModel(model, { precision: 1e-6 });
      const best = new Array(model.stateCount).fill(model.maximize ? -Infinity : Infinity);
      for (const policy of allPolicies(model)) {
        const values = evaluate(model, following(policy));
        for (let s = 0; s < values.length; s++)
          best[s] = model.maximize ? Math.max(best[s], values[s]) : Math.min(best[s], values[s]);
      }
      expectInside(analysis.optimal.values, best, 'optimal value');
    });
  }
});

describe('total reward at discount 1 against mathjs lusolve (proper policies only)', () => {
  for (let seed = 201; seed <= 210; seed++) {
    const model = properModel(seed, 8, 3);
    it(`seed ${seed}: random, optimal and worst policy values`, () => {
      const analysis = analyzeModel(model, { precision: 1e-6 });
      expectInside(analysis.random.values, evaluate(model, uniform(model)), 'random policy');
      expectInside(analysis.optimal.values, evaluate(model, following(analysis.optimal.policy!)), 'optimal policy');
      expectInside(analysis.worst.values, evaluate(model, following(analysis.worst.policy!)), 'worst policy');
    });
  }
});

/**
 * Seeded random models of our own at discount 1 where every step between non-terminal states
 * costs (negative reward) and entering a terminal may pay: some policies never end and lose
 * without bound, others end and have a finite total; the last two states are a trap (-inf).
 */
function costlyModel(seed: number, states: number, actions: number, asCosts = false): CompiledModel {
  const random = seededRandom(seed);
  const b = new ModelBuilder({ discount: 1, maximize: !asCosts });
  // As costs (objective minimize), every reward is negated: minimizing the cost is maximizing the reward.
  const sign = asCosts ? -1 : 1;
  const nowhere = { start: 0, end: 0 };
  for (let s = 0; s < states; s++) b.addState(`s${s}`, undefined, nowhere);
  const goal = b.addState('goal', 'goal', nowhere);
  for (let s = 0; s < states; s++) {
    for (let a = 0; a < actions; a++) {
      const outcomes = [];
      // The last two states form a trap: their choices never leave them.
      const trap = s >= states - 2;
      const first = trap ? states - 2 + Math.floor(random() * 2) : Math.floor(random() * (states + 1));
      const second = trap ? states - 2 + Math.floor(random() * 2) : Math.floor(random() * (states + 1));
      const split = first === second ? 1 : 0.3 + 0.4 * random();
      for (const [target, probability] of [
        [first, split],
        [second, 1 - split],
      ] as const) {
        if (probability <= 0) continue;
        const toGoal = target === states;
        const reward = toGoal ? Math.round(random() * 50) / 10 : -Math.round((0.1 + random() * 2) * 10) / 10;
        outcomes.push({ target: toGoal ? goal : target, probability, reward: sign * reward });
      }
      b.addChoice(s, `a${a}`, -1, outcomes);
    }
  }
  return b.finish([{ state: 0, probability: 1 }]);
}

/** The value of a deterministic policy at discount 1: -inf where it may never end (every step costs), else the solution of (I - P) v = r. */
function evaluateTotal(model: CompiledModel, policy: Int32Array): number[] {
  const n = model.stateCount;
  // States that can reach a state from which no terminal is reachable never end surely.
  const endsFrom = new Uint8Array(n);
  for (let s = 0; s < n; s++) if (model.terminal[s] !== 0) endsFrom[s] = 1;
  for (let changed = true; changed;) {
    changed = false;
    for (let s = 0; s < n; s++) {
      if (endsFrom[s]) continue;
      const c = policy[s];
      for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
        if (endsFrom[model.outcomeTarget[k]]) {
          endsFrom[s] = 1;
          changed = true;
        }
      }
    }
  }
  const proper = new Uint8Array(n).fill(1);
  for (let changed = true; changed;) {
    changed = false;
    for (let s = 0; s < n; s++) {
      if (!proper[s] || model.terminal[s] !== 0) continue;
      const c = policy[s];
      let bad = !endsFrom[s];
      for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++)
        if (!proper[model.outcomeTarget[k]]) bad = true;
      if (bad) {
        proper[s] = 0;
        changed = true;
      }
    }
  }
  const solved = evaluate(model, (s, c) => (proper[s] && policy[s] === c ? 1 : 0));
  return solved.map((v, s) => (proper[s] ? v : -Infinity));
}

describe('total reward at discount 1 with improper policies, against brute force and mathjs lusolve', () => {
  for (let seed = 301; seed <= 312; seed++) {
    const model = costlyModel(seed, 6, 3);
    it(`seed ${seed}: V* is the best total over deterministic policies (-inf where no policy ends surely)`, () => {
      const analysis = analyzeModel(model, { precision: 1e-6 });
      const best = new Array(model.stateCount).fill(-Infinity);
      for (const policy of allPolicies(model)) {
        const values = evaluateTotal(model, policy);
        for (let s = 0; s < values.length; s++) best[s] = Math.max(best[s], values[s]);
      }
      for (let s = 0; s < model.stateCount; s++) {
        if (best[s] === -Infinity) {
          expect(analysis.optimal.values.upper[s], `state ${s}`).toBe(-Infinity);
        } else {
          expect(analysis.optimal.values.lower[s], `state ${s}`).toBeLessThanOrEqual(best[s] + 1e-9);
          expect(analysis.optimal.values.upper[s], `state ${s}`).toBeGreaterThanOrEqual(best[s] - 1e-9);
          expect(analysis.optimal.values.upper[s] - analysis.optimal.values.lower[s]).toBeLessThanOrEqual(1e-6);
        }
      }
      // The returned policy attains V*: its own total equals the bounds.
      const own = evaluateTotal(model, analysis.optimal.policy!);
      for (let s = 0; s < model.stateCount; s++) {
        if (best[s] === -Infinity) continue;
        expect(own[s], `policy value at state ${s}`).toBeGreaterThanOrEqual(analysis.optimal.values.lower[s] - 1e-9);
      }
    });
  }
});

describe('the same models as costs to minimize (rewards negated): V* is the negated maximum', () => {
  for (let seed = 301; seed <= 306; seed++) {
    it(`seed ${seed}: minimize gives -1 times the brute-force maximum of the reward model`, () => {
      const rewards = costlyModel(seed, 6, 3);
      const costs = costlyModel(seed, 6, 3, true);
      const analysis = analyzeModel(costs, { precision: 1e-6 });
      const best = new Array(rewards.stateCount).fill(-Infinity);
      for (const policy of allPolicies(rewards)) {
        const values = evaluateTotal(rewards, policy);
        for (let s = 0; s < values.length; s++) best[s] = Math.max(best[s], values[s]);
      }
      for (let s = 0; s < costs.stateCount; s++) {
        const cost = -best[s];
        if (cost === Infinity) {
          expect(analysis.optimal.values.lower[s], `state ${s}`).toBe(Infinity);
        } else {
          expect(analysis.optimal.values.lower[s], `state ${s}`).toBeLessThanOrEqual(cost + 1e-9);
          expect(analysis.optimal.values.upper[s], `state ${s}`).toBeGreaterThanOrEqual(cost - 1e-9);
        }
      }
    });
  }
});
