/**
 * Routes (fewest steps) towards a set of states, for rules that talk about distances ("the goal is 812
 * steps from the start") and show the route as a trace. The layering itself is the analysis core's
 * backward breadth-first search (reachability.ts); this file turns it into concrete state/action paths.
 */
import type { CompiledModel } from '../model/compiled';
import { buildModelGraph, type ModelGraph } from './graph';
import { backwardLayering, type Layering } from './reachability';

/** One step of a path: the state and the choice taken there (-1 on the last state). */
export interface PathStep {
  state: number;
  choice: number;
  /** The outcome of `choice` that leads to the next state (-1 on the last state). */
  outcome: number;
}

/** Fewest steps from every state to one of `targets` (0 on targets, -1 where no path exists). */
export function stepsTo(
  model: CompiledModel,
  targets: Uint8Array,
  graph: ModelGraph = buildModelGraph(model),
): Layering {
  return backwardLayering(graph, targets);
}

/**
 * The shortest route the layering found from `state`: at each state its recorded choice, and the
 * outcome of that choice that enters the next lower layer; ends with the target state entered.
 */
export function routeFrom(model: CompiledModel, layering: Layering, state: number): PathStep[] {
  const { layer, via } = layering;
  if (layer[state] < 0) return [];
  const route: PathStep[] = [];
  let s = state;
  while (layer[s] > 0) {
    const c = via[s];
    let outcome = -1;
    for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
      if (model.outcomeProb[k] > 0 && layer[model.outcomeTarget[k]] === layer[s] - 1) {
        outcome = k;
        break;
      }
    }
    route.push({ state: s, choice: c, outcome });
    s = model.outcomeTarget[outcome];
  }
  route.push({ state: s, choice: -1, outcome: -1 });
  return route;
}

/** The fewest steps from the start distribution's states, weighted: per start state and its probability. */
export function startEntries(model: CompiledModel): Array<{ state: number; probability: number }> {
  const entries: Array<{ state: number; probability: number }> = [];
  for (let i = 0; i < model.startState.length; i++) {
    if (model.startProb[i] > 0) entries.push({ state: model.startState[i], probability: model.startProb[i] });
  }
  return entries;
}

/** The start states with positive probability that are not terminal, each once. */
export function liveStartStates(model: CompiledModel): number[] {
  const states: number[] = [];
  for (const { state } of startEntries(model))
    if (model.terminal[state] === 0 && !states.includes(state)) states.push(state);
  return states;
}

/**
 * For walks forward in time: appends the non-terminal states a choice can lead to onto `next`, the
 * layer of time `time`, each state once per layer (`queued` remembers the last layer of each state).
 */
export function pushSuccessors(
  model: CompiledModel,
  choice: number,
  time: number,
  queued: Int32Array,
  next: number[],
): void {
  for (let o = model.outcomeStart[choice]; o < model.outcomeStart[choice + 1]; o++) {
    const target = model.outcomeTarget[o];
    if (model.outcomeProb[o] > 0 && model.terminal[target] === 0 && queued[target] !== time) {
      queued[target] = time;
      next.push(target);
    }
  }
}
