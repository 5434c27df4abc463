/**
 * Concrete routes and loops for findings: the fewest-steps route from the start to a set of
 * states, and one round of a loop that a policy follows inside an end component.
 */
import type { CompiledModel } from '../model/compiled';
import type { ModelGraph } from './graph';
import { routeFrom, type PathStep } from './paths';
import { backwardLayering } from './reachability';

/**
 * The fewest-steps route from a start state into `targets` (ending with the target state
 * entered), from the start state closest to them; empty when no start state reaches them.
 */
export function routeFromStart(graph: ModelGraph, targets: Uint8Array): PathStep[] {
  const model = graph.model;
  const layering = backwardLayering(graph, targets);
  let best = -1;
  for (let i = 0; i < model.startState.length; i++) {
    const s = model.startState[i];
    if (model.startProb[i] > 0 && layering.layer[s] >= 0 && (best < 0 || layering.layer[s] < layering.layer[best]))
      best = s;
  }
  return best < 0 ? [] : routeFrom(model, layering, best);
}

/**
 * One round of the loop that `policy` (state -> choice) follows from `entry`, staying among
 * `inside` states: at each state the policy's choice, and its outcome towards a state not yet on
 * the way (else its most likely outcome), until a state repeats. Returns the whole walk from
 * `entry` (ending with the repeated state, choice -1) and where the cycle begins in it; undefined
 * if the policy leaves the states.
 */
export function loopOf(
  model: CompiledModel,
  policy: (state: number) => number,
  entry: number,
  inside: Uint8Array,
): { walk: PathStep[]; cycleStart: number } | undefined {
  const steps: PathStep[] = [];
  const position = new Map<number, number>();
  let s = entry;
  while (!position.has(s)) {
    const c = policy(s);
    if (c < 0 || !inside[s]) return undefined;
    position.set(s, steps.length);
    let chosen = -1;
    for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
      const t = model.outcomeTarget[k];
      if (!(model.outcomeProb[k] > 0) || !inside[t]) continue;
      const fresh = !position.has(t);
      const chosenFresh = chosen >= 0 && !position.has(model.outcomeTarget[chosen]);
      if (
        chosen < 0 ||
        (fresh && !chosenFresh) ||
        (fresh === chosenFresh && model.outcomeProb[k] > model.outcomeProb[chosen])
      )
        chosen = k;
    }
    if (chosen < 0) return undefined;
    steps.push({ state: s, choice: c, outcome: chosen });
    s = model.outcomeTarget[chosen];
  }
  steps.push({ state: s, choice: -1, outcome: -1 });
  return { walk: steps, cycleStart: position.get(s)! };
}
