/**
 * "The route to the goal": a deterministic policy that reaches a goal with the best achievable
 * probability, going as directly as the graph allows, and what it earns. Rules compare it with the
 * optimal policy ("the loop earns 48.1; the route to the exit earns 7.2").
 *
 * Construction (the standard memoryless scheduler for maximal reachability probabilities, e.g. Baier
 * and Katoen, Principles of Model Checking, 2008, section 10.6): keep the choices that preserve the
 * best goal probability (their expected best probability over the outcomes equals the state's), then
 * among those take one that makes progress towards a goal in the graph (backward layering from the
 * goals). Following it from a state reaches a goal with that state's best probability. States from
 * which no goal is reachable keep the optimal policy's choice.
 */
import { TERMINAL_CODE, type CompiledModel } from '../model/compiled';
import { buildModelGraph } from './graph';
import { analyzeModel } from './index';
import { policyChain } from './model-variants';
import { backwardLayering } from './reachability';
import type { Analysis } from './types';

export interface GoalRoute {
  /** State -> choice of the original model; -1 on terminals. */
  policy: Int32Array;
  /** The analysis of the policy's Markov chain: its `optimal` part is the route's value and reach (its lengths are NaN, not solved). */
  evaluation: Analysis;
}

/** Goal probabilities closer than this count as equal when choosing the preserving choices. */
const REACH_TOLERANCE = 1e-6;

const routes = new WeakMap<Analysis, GoalRoute | null>();

/** The goal route's name among an analysis' derived solutions. */
const ROUTE = 'goal-route';

/** The goal route of an analysed model, computed once per analysis (several rules ask for it). */
export function goalRouteOf(model: CompiledModel, analysis: Analysis, precision: number): GoalRoute | undefined {
  let route = routes.get(analysis);
  if (route === undefined) {
    route = goalRoute(model, analysis, precision) ?? null;
    routes.set(analysis, route);
  }
  return route ?? undefined;
}

export function goalRoute(model: CompiledModel, analysis: Analysis, precision: number): GoalRoute | undefined {
  const best = analysis.maxGoalReach;
  const goals = new Uint8Array(model.stateCount);
  const domain = new Uint8Array(model.stateCount);
  let anyGoal = false;
  for (let s = 0; s < model.stateCount; s++) {
    if (model.terminal[s] === TERMINAL_CODE.goal) {
      goals[s] = 1;
      anyGoal = true;
    }
    if (best[s] > REACH_TOLERANCE) domain[s] = 1;
  }
  if (!anyGoal) return undefined;
  const preserving = new Uint8Array(model.choiceCount);
  for (let s = 0; s < model.stateCount; s++) {
    if (!domain[s] || model.terminal[s] !== 0) continue;
    for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
      let expected = 0;
      for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
        const t = model.outcomeTarget[k];
        expected += model.outcomeProb[k] * (goals[t] ? 1 : best[t]);
      }
      if (expected >= best[s] - REACH_TOLERANCE) preserving[c] = 1;
    }
  }
  const { layer, via } = backwardLayering(buildModelGraph(model), goals, { domain, allowed: preserving });
  const policy = new Int32Array(model.stateCount).fill(-1);
  const fallback = analysis.optimal.policy;
  for (let s = 0; s < model.stateCount; s++) {
    if (model.terminal[s] !== 0) continue;
    if (layer[s] > 0) policy[s] = via[s];
    else policy[s] = fallback && fallback[s] >= 0 ? fallback[s] : model.choiceStart[s];
  }
  const chain = policyChain(model, policy);
  // The route's chain is analysed like the model: from the last route's solution, kept for the next
  // one. Its expected lengths are not solved: the rules read its values and reach probabilities only.
  const evaluation = analyzeModel(chain.model, {
    precision,
    startFrom: analysis.derivedStart?.[ROUTE],
    keepSolution: analysis.solution !== undefined,
    expectedLengths: false,
  });
  if (analysis.solution && evaluation.solution) (analysis.solution.derived ??= {})[ROUTE] = evaluation.solution;
  return { policy, evaluation };
}
