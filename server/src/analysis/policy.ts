/**
 * Q bounds per choice, the set of best choices, and a deterministic stationary policy that
 * attains the best (or worst) value.
 *
 * Being greedy with respect to V* is not enough at discount 1: when "wait here for 0" ties with
 * "move on towards the goal", a greedy policy may wait forever and earn nothing. The policy is
 * therefore built by backward layering over best choices from the states that realise their value
 * (terminals first, then zero-reward end components where staying is optimal): each state takes a
 * best choice that can move it to a lower layer, so the policy reaches those states with
 * probability 1 and its value equals V* (the standard construction for maximal reachability and
 * stochastic shortest paths; e.g. Baier and Katoen, Principles of Model Checking, 2008,
 * section 10.6, and Bertsekas and Tsitsiklis 1991).
 */
import type { CompiledModel } from '../model/compiled';
import type { ModelGraph } from './graph';
import type { Bounds } from './types';
import { backwardLayering } from './reachability';
import { STATUS_FINITE, type ValueSolution } from './total-reward';

/** Sound bounds on r(c) + discount * sum p V(t) for every choice; an undefined sum gives [-inf, inf]. */
export function choiceBounds(
  model: CompiledModel,
  reward: Float64Array,
  discount: number,
  lower: Float64Array,
  upper: Float64Array,
): Bounds {
  const { outcomeStart, outcomeTarget, outcomeProb } = model;
  const qLower = new Float64Array(model.choiceCount);
  const qUpper = new Float64Array(model.choiceCount);
  for (let c = 0; c < model.choiceCount; c++) {
    let accLower = 0;
    let accUpper = 0;
    for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) {
      const p = outcomeProb[k];
      if (!(p > 0)) continue;
      const t = outcomeTarget[k];
      accLower += p * lower[t];
      accUpper += p * upper[t];
    }
    const l = discount === 0 ? reward[c] : reward[c] + discount * accLower;
    const u = discount === 0 ? reward[c] : reward[c] + discount * accUpper;
    // +inf and -inf together have no defined sum: say nothing more than that.
    qLower[c] = Number.isNaN(l) ? -Infinity : l;
    qUpper[c] = Number.isNaN(u) ? Infinity : u;
  }
  return { lower: qLower, upper: qUpper };
}

/**
 * 1 for choices that cannot be proven worse than the best (sigma = 1: maximise; -1: minimise):
 * their Q bounds overlap the state's value bounds on the good side.
 */
export function bestChoices(
  graph: ModelGraph,
  q: Bounds,
  lower: Float64Array,
  upper: Float64Array,
  sigma: number,
): Uint8Array {
  const { choiceState } = graph;
  const out = new Uint8Array(graph.model.choiceCount);
  for (let c = 0; c < out.length; c++) {
    const s = choiceState[c];
    out[c] = (sigma > 0 ? q.upper[c] >= lower[s] : q.lower[c] <= upper[s]) ? 1 : 0;
  }
  return out;
}

/**
 * A deterministic policy attaining the solution's values (sigma = 1 for the maximum, -1 for the
 * minimum); -1 on absorbing states.
 */
export function attainingPolicy(
  graph: ModelGraph,
  solution: ValueSolution,
  q: Bounds,
  best: Uint8Array,
  sigma: number,
): Int32Array {
  const { model, absorbing, choiceState } = graph;
  const n = model.stateCount;
  const { choiceStart } = model;
  const policy = new Int32Array(n).fill(-1);
  const finite = new Uint8Array(n);
  for (let s = 0; s < n; s++) finite[s] = !absorbing[s] && solution.status[s] === STATUS_FINITE ? 1 : 0;

  // Candidate choices: best ones that keep the episode where values are finite.
  const candidate = new Uint8Array(model.choiceCount);
  for (let c = 0; c < candidate.length; c++) {
    candidate[c] = best[c] && finite[choiceState[c]] && (!solution.finiteChoices || solution.finiteChoices[c]) ? 1 : 0;
  }
  const toEnd = backwardLayering(graph, absorbing, { domain: finite, allowed: candidate });
  for (let s = 0; s < n; s++) if (finite[s] && toEnd.layer[s] > 0) policy[s] = toEnd.via[s];

  // States that cannot end the episode optimally realise their value by staying in a zero-reward
  // end component (value 0); from them, layer again.
  const groups = solution.zeroGroups;
  if (groups) {
    const seeds = new Uint8Array(n);
    let added = false;
    for (let s = 0; s < n; s++) if (toEnd.layer[s] >= 0) seeds[s] = 1;
    for (let g = 0; g < groups.count; g++) {
      const first = groups.states[g][0];
      if (toEnd.layer[first] >= 0 || !(solution.lower[first] <= 0 && solution.upper[first] >= 0)) continue;
      for (const s of groups.states[g]) {
        if (toEnd.layer[s] >= 0) continue;
        seeds[s] = 1;
        added = true;
        for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) {
          if (groups.choiceIn[c]) {
            policy[s] = c;
            break;
          }
        }
      }
    }
    if (added) {
      const toStay = backwardLayering(graph, seeds, { domain: finite, allowed: candidate });
      for (let s = 0; s < n; s++) if (finite[s] && policy[s] < 0 && toStay.layer[s] > 0) policy[s] = toStay.via[s];
    }
  }

  for (let s = 0; s < n; s++) {
    if (absorbing[s] || policy[s] >= 0) continue;
    if (solution.infinitePolicy && solution.infinitePolicy[s] >= 0) {
      policy[s] = solution.infinitePolicy[s];
      continue;
    }
    // Continuing tasks (no terminal reachable) and states with infinite or undefined values:
    // the choice with the best midpoint among the best choices.
    let chosen = -1;
    let chosenScore = -Infinity;
    for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) {
      if (!best[c] && chosen >= 0) continue;
      const score = sigma * midpoint(q.lower[c], q.upper[c]);
      if (chosen < 0 || (best[c] && !best[chosen]) || score > chosenScore) {
        chosen = c;
        chosenScore = score;
      }
    }
    policy[s] = chosen;
  }
  return policy;
}

function midpoint(lower: number, upper: number): number {
  if (lower === upper) return lower;
  if (lower === -Infinity && upper === Infinity) return 0;
  if (lower === -Infinity) return -Infinity;
  if (upper === Infinity) return Infinity;
  return (lower + upper) / 2;
}
