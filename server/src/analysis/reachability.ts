/**
 * Qualitative reachability on the graph of a compiled model (an edge for every outcome of positive
 * probability): forward reachability from the start, backward layering towards a set of states,
 * and almost-sure reachability. These decide structure exactly, with no floating-point tolerance.
 */
import type { CompiledModel } from '../model/compiled';
import type { ModelGraph } from './graph';

/** 1 for every state that some policy reaches with positive probability from the start distribution. */
export function reachableFromStart(model: CompiledModel): Uint8Array {
  const sources: number[] = [];
  for (let i = 0; i < model.startState.length; i++) if (model.startProb[i] > 0) sources.push(model.startState[i]);
  return forwardReachable(model, sources);
}

/** 1 for every state reachable from one of `sources` along outcomes of positive probability. */
export function forwardReachable(model: CompiledModel, sources: ArrayLike<number>): Uint8Array {
  const { choiceStart, outcomeStart, outcomeTarget, outcomeProb } = model;
  const seen = new Uint8Array(model.stateCount);
  const queue = new Int32Array(model.stateCount);
  let head = 0;
  let tail = 0;
  for (let i = 0; i < sources.length; i++) {
    const s = sources[i];
    if (!seen[s]) {
      seen[s] = 1;
      queue[tail++] = s;
    }
  }
  while (head < tail) {
    const s = queue[head++];
    const first = outcomeStart[choiceStart[s]];
    const last = outcomeStart[choiceStart[s + 1]];
    for (let k = first; k < last; k++) {
      const t = outcomeTarget[k];
      if (outcomeProb[k] > 0 && !seen[t]) {
        seen[t] = 1;
        queue[tail++] = t;
      }
    }
  }
  return seen;
}

export interface Layering {
  /** Steps from the seed set along the layering: 0 on seeds, -1 where the seeds are not reachable. */
  layer: Int32Array;
  /** The choice through which each layered non-seed state reaches a lower layer; -1 elsewhere. */
  via: Int32Array;
}

export interface LayeringOptions {
  /** Only these states (1) may be layered; seeds are always layered. */
  domain?: Uint8Array;
  /** Only these choices (1) may be used. */
  allowed?: Uint8Array;
}

/**
 * Backward breadth-first layering: a state joins layer k+1 when one of its allowed choices has an
 * outcome of positive probability into layer k. The recorded choice makes progress towards the
 * seeds, so a policy that follows `via` reaches the seeds with positive probability from every
 * layered state (the "attractor" construction of reachability games and MDPs; e.g. de Alfaro,
 * Formal Verification of Probabilistic Systems, PhD thesis, Stanford 1997, ch. 3).
 */
export function backwardLayering(graph: ModelGraph, seeds: Uint8Array, options: LayeringOptions = {}): Layering {
  const n = graph.model.stateCount;
  const { predStart, predChoice, choiceState } = graph;
  const { domain, allowed } = options;
  const layer = new Int32Array(n).fill(-1);
  const via = new Int32Array(n).fill(-1);
  const queue = new Int32Array(n);
  let head = 0;
  let tail = 0;
  for (let s = 0; s < n; s++) {
    if (seeds[s]) {
      layer[s] = 0;
      queue[tail++] = s;
    }
  }
  while (head < tail) {
    const t = queue[head++];
    for (let i = predStart[t]; i < predStart[t + 1]; i++) {
      const c = predChoice[i];
      if (allowed && !allowed[c]) continue;
      const s = choiceState[c];
      if (layer[s] >= 0 || (domain && !domain[s])) continue;
      layer[s] = layer[t] + 1;
      via[s] = c;
      queue[tail++] = s;
    }
  }
  return { layer, via };
}

/** 1 for the states from which `targets` can be reached with positive probability (by some policy, over allowed choices). */
export function canReach(graph: ModelGraph, targets: Uint8Array, allowed?: Uint8Array): Uint8Array {
  if (!targets.includes(1)) return new Uint8Array(targets.length);
  const { layer } = backwardLayering(graph, targets, { allowed });
  const out = new Uint8Array(layer.length);
  for (let s = 0; s < layer.length; s++) out[s] = layer[s] >= 0 ? 1 : 0;
  return out;
}

/**
 * The states from which some policy reaches `targets` with probability 1, staying inside `domain`
 * (when given). Classic fixed point: repeatedly drop the states that cannot reach the targets
 * through choices whose every outcome stays among the remaining states (de Alfaro 1997, ch. 3;
 * Baier and Katoen, Principles of Model Checking, 2008, Algorithm 45).
 */
export function almostSureReach(graph: ModelGraph, targets: Uint8Array, domain?: Uint8Array): Uint8Array {
  const { model, absorbing } = graph;
  const n = model.stateCount;
  const { choiceStart, outcomeStart, outcomeTarget, outcomeProb } = model;
  let candidates: Uint8Array = new Uint8Array(n);
  for (let s = 0; s < n; s++) {
    candidates[s] = targets[s] || (!absorbing[s] && (!domain || domain[s])) ? 1 : 0;
  }
  const safe = new Uint8Array(model.choiceCount);
  for (;;) {
    for (let s = 0; s < n; s++) {
      for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) {
        let ok = candidates[s];
        for (let k = outcomeStart[c]; ok && k < outcomeStart[c + 1]; k++) {
          if (outcomeProb[k] > 0 && !candidates[outcomeTarget[k]]) ok = 0;
        }
        safe[c] = ok;
      }
    }
    const seeds = new Uint8Array(n);
    for (let s = 0; s < n; s++) seeds[s] = targets[s] && candidates[s] ? 1 : 0;
    const reached = canReach(graph, seeds, safe);
    let changed = false;
    for (let s = 0; s < n; s++) {
      const keep = reached[s] && candidates[s] ? 1 : 0;
      if (keep !== candidates[s]) changed = true;
      reached[s] = keep;
    }
    candidates = reached;
    if (!changed) return candidates;
  }
}
