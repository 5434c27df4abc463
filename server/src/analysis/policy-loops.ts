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
 * The most probable path (largest product of probabilities, start probability included) along which
 * the policy ends in a terminal of `kind` (TERMINAL_CODE): Dijkstra's algorithm on -log(probability)
 * over the policy's chain. Empty when the policy never ends there.
 */
export function likeliestPathTo(model: CompiledModel, policy: Int32Array, kind: number): PathStep[] {
  const n = model.stateCount;
  const cost = new Float64Array(n).fill(Infinity);
  const via = new Int32Array(n).fill(-1);
  const viaState = new Int32Array(n).fill(-1);
  const done = new Uint8Array(n);
  const heap = new MinHeap();
  for (let i = 0; i < model.startState.length; i++) {
    const s = model.startState[i];
    const c = -Math.log(model.startProb[i]);
    if (model.startProb[i] > 0 && c < cost[s]) {
      cost[s] = c;
      heap.push(c, s);
    }
  }
  let target = -1;
  while (heap.size > 0) {
    const s = heap.pop();
    if (done[s]) continue;
    done[s] = 1;
    if (model.terminal[s] === kind) {
      target = s;
      break;
    }
    const c = policy[s];
    if (model.terminal[s] !== 0 || c < 0) continue;
    for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
      const t = model.outcomeTarget[k];
      if (!(model.outcomeProb[k] > 0) || done[t]) continue;
      const next = cost[s] - Math.log(model.outcomeProb[k]);
      if (next < cost[t]) {
        cost[t] = next;
        via[t] = k;
        viaState[t] = s;
        heap.push(next, t);
      }
    }
  }
  return target < 0 ? [] : pathAlong(policy, via, viaState, target);
}

/** A binary min-heap of (key, state) pairs for Dijkstra's algorithm. */
class MinHeap {
  private keys: number[] = [];
  private values: number[] = [];

  get size(): number {
    return this.keys.length;
  }

  push(key: number, value: number): void {
    const { keys, values } = this;
    let i = keys.length;
    keys.push(key);
    values.push(value);
    while (i > 0) {
      const parent = (i - 1) >> 1;
      if (keys[parent] <= key) break;
      keys[i] = keys[parent];
      values[i] = values[parent];
      i = parent;
    }
    keys[i] = key;
    values[i] = value;
  }

  pop(): number {
    const { keys, values } = this;
    const top = values[0];
    const lastKey = keys.pop()!;
    const lastValue = values.pop()!;
    if (keys.length > 0) {
      let i = 0;
      for (;;) {
        let child = 2 * i + 1;
        if (child >= keys.length) break;
        if (child + 1 < keys.length && keys[child + 1] < keys[child]) child++;
        if (keys[child] >= lastKey) break;
        keys[i] = keys[child];
        values[i] = values[child];
        i = child;
      }
      keys[i] = lastKey;
      values[i] = lastValue;
    }
    return top;
  }
}
