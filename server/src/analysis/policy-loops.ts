/**
 * Where a fixed policy goes: the loop it circles forever (a closed recurrent class of its Markov chain
 * that holds no terminal) and its most likely way into a given terminal kind. Used to show concrete
 * state/action sequences with the incentive rules' findings.
 */
import type { CompiledModel } from '../model/compiled';
import type { PathStep } from './paths';
import { stronglyConnectedComponents } from './scc';

export interface PolicyLoop {
  /** From a start state to the first state of the loop (that state included, without its step). */
  approach: PathStep[];
  /** The loop: each state with the policy's choice and the outcome followed; the last outcome returns to the first state. */
  cycle: PathStep[];
}

/**
 * A loop the policy can circle forever from the start: a bottom strongly connected component of the
 * policy's chain without terminals, the one nearest to the start. Undefined when the policy ends every
 * episode with probability 1.
 */
export function policyLoop(model: CompiledModel, policy: Int32Array): PolicyLoop | undefined {
  const n = model.stateCount;
  const choiceMask = new Uint8Array(model.choiceCount);
  for (let s = 0; s < n; s++) if (model.terminal[s] === 0 && policy[s] >= 0) choiceMask[policy[s]] = 1;
  // Breadth-first from the start along the policy, remembering how each state was first reached.
  const order: number[] = [];
  const via = new Int32Array(n).fill(-2);
  const viaState = new Int32Array(n).fill(-1);
  for (let i = 0; i < model.startState.length; i++) {
    const s = model.startState[i];
    if (model.startProb[i] > 0 && via[s] === -2) {
      via[s] = -1;
      order.push(s);
    }
  }
  for (let head = 0; head < order.length; head++) {
    const s = order[head];
    const c = policy[s];
    if (model.terminal[s] !== 0 || c < 0) continue;
    for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
      const t = model.outcomeTarget[k];
      if (model.outcomeProb[k] > 0 && via[t] === -2) {
        via[t] = k;
        viaState[t] = s;
        order.push(t);
      }
    }
  }
  const visited = new Uint8Array(n);
  for (const s of order) if (model.terminal[s] === 0) visited[s] = 1;
  const scc = stronglyConnectedComponents(model, visited, choiceMask);
  const closed = new Uint8Array(scc.count).fill(1);
  for (const s of order) {
    const comp = scc.componentOf[s];
    if (comp < 0) continue;
    const c = policy[s];
    for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
      if (model.outcomeProb[k] > 0 && scc.componentOf[model.outcomeTarget[k]] !== comp) closed[comp] = 0;
    }
  }
  const entry = order.find((s) => scc.componentOf[s] >= 0 && closed[scc.componentOf[s]]);
  if (entry === undefined) return undefined;
  const comp = scc.componentOf[entry];
  // Around the loop along the most likely outcome (every outcome stays in a closed component).
  const cycle: PathStep[] = [];
  const position = new Map<number, number>();
  let s = entry;
  while (!position.has(s)) {
    position.set(s, cycle.length);
    const c = policy[s];
    let outcome = -1;
    for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
      if (scc.componentOf[model.outcomeTarget[k]] !== comp || !(model.outcomeProb[k] > 0)) continue;
      if (outcome < 0 || model.outcomeProb[k] > model.outcomeProb[outcome]) outcome = k;
    }
    cycle.push({ state: s, choice: c, outcome });
    s = model.outcomeTarget[outcome];
  }
  return { approach: pathAlong(policy, via, viaState, s), cycle: cycle.slice(position.get(s)) };
}

/** The breadth-first path from the start to `target` recorded in `via` / `viaState`. */
function pathAlong(policy: Int32Array, via: Int32Array, viaState: Int32Array, target: number): PathStep[] {
  const steps: PathStep[] = [{ state: target, choice: -1, outcome: -1 }];
  for (let s = target; via[s] >= 0; s = viaState[s]) {
    steps.push({ state: viaState[s], choice: policy[viaState[s]], outcome: via[s] });
  }
  return steps.reverse();
}

/**
 * The most likely way the policy ends in a terminal of `kind` (TERMINAL_CODE) from the start: at each
 * state the outcome with the largest probability times the chance, under the policy, of ending in that
 * kind from there (`reachKind`, per state). Stops after `limit` steps.
 */
export function likelyPathTo(model: CompiledModel, policy: Int32Array, reachKind: Float64Array, kind: number, limit = 200): PathStep[] {
  let s = -1;
  let bestStart = -1;
  for (let i = 0; i < model.startState.length; i++) {
    const score = model.startProb[i] * (model.terminal[model.startState[i]] === kind ? 1 : reachKind[model.startState[i]]);
    if (score > bestStart) {
      bestStart = score;
      s = model.startState[i];
    }
  }
  const steps: PathStep[] = [];
  while (s >= 0 && model.terminal[s] === 0 && steps.length < limit) {
    const c = policy[s];
    let outcome = -1;
    let score = -1;
    for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
      const t = model.outcomeTarget[k];
      const value = model.outcomeProb[k] * (model.terminal[t] === kind ? 1 : model.terminal[t] !== 0 ? 0 : reachKind[t]);
      if (value > score) {
        score = value;
        outcome = k;
      }
    }
    steps.push({ state: s, choice: c, outcome });
    s = model.outcomeTarget[outcome];
  }
  steps.push({ state: s, choice: -1, outcome: -1 });
  return steps;
}
