/**
 * Reference values of fixed policies, independent of Episcope's solvers: the linear system
 * (I - discount P_pi) v = r_pi of Bellman's equation for a fixed policy (M. Puterman, Markov
 * Decision Processes, 1994, section 6.1) solved by mathjs `lusolve`, and every deterministic
 * policy of a small model for brute-force optima (Puterman 1994, Theorem 6.2.7). The seeded
 * proper models are our own.
 */
import { lusolve } from 'mathjs';
import { ModelBuilder, type CompiledModel } from '../../server/src/model/compiled';
import { seededRandom } from '../reference/gridworlds';

/**
 * Solves (I - discount P) v = r for the chain where state s takes choices with the given weights;
 * `reward` per outcome (default the model's), `discount` default the model's.
 */
export function evaluate(
  model: CompiledModel,
  weights: (s: number, c: number) => number,
  discount = model.discount,
  reward = (k: number) => model.outcomeReward[k],
): number[] {
  const n = model.stateCount;
  const a: number[][] = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => (i === j ? 1 : 0)));
  const b: number[] = new Array(n).fill(0);
  for (let s = 0; s < n; s++) {
    if (model.terminal[s] !== 0) continue;
    for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
      const w = weights(s, c);
      if (w === 0) continue;
      for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
        const p = model.outcomeProb[k];
        b[s] += w * p * reward(k);
        const t = model.outcomeTarget[k];
        // Terminal states are worth 0: their column never contributes.
        if (model.terminal[t] === 0) a[s][t] -= w * discount * p;
      }
    }
  }
  const solution = lusolve(a, b) as number[][];
  return solution.map((row) => row[0]);
}

/** The uniformly random policy as weights. */
export const uniform = (model: CompiledModel) => (s: number) => 1 / (model.choiceStart[s + 1] - model.choiceStart[s]);

/** Every deterministic policy of a small model, as choice arrays (the same array, changed in place). */
export function* allPolicies(model: CompiledModel): Generator<Int32Array> {
  const n = model.stateCount;
  const policy = new Int32Array(n).fill(-1);
  for (let s = 0; s < n; s++) if (model.choiceStart[s] < model.choiceStart[s + 1]) policy[s] = model.choiceStart[s];
  for (;;) {
    yield policy;
    let s = 0;
    for (; s < n; s++) {
      if (policy[s] < 0) continue;
      if (policy[s] + 1 < model.choiceStart[s + 1]) {
        policy[s]++;
        break;
      }
      policy[s] = model.choiceStart[s];
    }
    if (s === n) return;
  }
}

/**
 * Seeded random models of our own at discount 1 in which every choice ends the episode with
 * probability at least 0.2, so every policy is proper and every value finite.
 */
export function properModel(seed: number, states: number, actions: number): CompiledModel {
  const random = seededRandom(seed);
  const b = new ModelBuilder({ discount: 1, maximize: true });
  const nowhere = { start: 0, end: 0 };
  for (let s = 0; s < states; s++) b.addState(`s${s}`, undefined, nowhere);
  const goal = b.addState('goal', 'goal', nowhere);
  const pit = b.addState('pit', 'failure', nowhere);
  for (let s = 0; s < states; s++) {
    for (let a = 0; a < actions; a++) {
      const stay = 0.2 + 0.6 * random();
      const onward = Math.floor(random() * states);
      const end = random() < 0.5 ? goal : pit;
      b.addChoice(s, `a${a}`, -1, [
        { target: onward, probability: stay, reward: Math.round((random() * 4 - 2) * 10) / 10 },
        { target: end, probability: 1 - stay, reward: end === goal ? 5 : -5 },
      ]);
    }
  }
  return b.finish([{ state: 0, probability: 1 }]);
}
