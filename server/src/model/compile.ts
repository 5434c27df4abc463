/**
 * Compiles a ParsedSpec into a CompiledModel (dense ids, CSR arrays). Compilation succeeds only
 * for a well-defined finite MDP; otherwise it returns the first reason it is not, in one sentence,
 * and the structural rules explain every problem with its position.
 */
import { ModelBuilder, type CompiledModel } from './compiled';
import { arrow, formatNumber, quote } from '../spec/names';
import type { ParsedSpec, RewardPart, SpecState } from '../spec/types';

export interface CompileResult {
  model?: CompiledModel;
  /** Why there is no model: the first problem found, in one sentence. */
  reason?: string;
  /** Set when compiling failed through a bug of ours rather than a problem of the spec. */
  internalError?: string;
}

/** Outcome probabilities of a transition (and of the start) must add up to 1 within this. */
export const PROBABILITY_SUM_TOLERANCE = 1e-9;

/** The actions a state offers: its own set, else the spec's default set (undefined if neither exists). */
export function actionSetOf(spec: ParsedSpec, state: SpecState): readonly string[] | undefined {
  if (state.actions) return state.actions.map((a) => a.value);
  if (spec.actionsSpan !== undefined || spec.actions.length > 0) return spec.actions.map((a) => a.value);
  return undefined;
}

/**
 * The reward term names the model tracks: the declared `rewardTerms`, or, when the spec declares
 * none, every term name its rewards use (in order of first use).
 */
export function termNamesOf(spec: ParsedSpec): string[] {
  if (spec.rewardTerms.length > 0 || spec.rewardTermsSpan !== undefined) return spec.rewardTerms.map((t) => t.name);
  const names = new Set<string>();
  for (const transition of spec.transitions) {
    for (const outcome of transition.outcomes) {
      for (const part of outcome.reward) if (part.term !== null) names.add(part.term);
    }
  }
  return [...names];
}

export function compileSpec(spec: ParsedSpec): CompileResult {
  try {
    return compileChecked(spec);
  } catch (error) {
    // The checks below are meant to leave nothing that can throw; a failure is a bug of ours.
    const reason = `the spec could not be compiled because of an internal error (${error instanceof Error ? error.message : String(error)})`;
    return { reason, internalError: reason };
  }
}

function compileChecked(spec: ParsedSpec): CompileResult {
  const discount = spec.discount?.value;
  if (discount === undefined) return { reason: 'the spec has no discount, so returns are not defined' };
  if (!Number.isFinite(discount) || discount < 0 || discount > 1) return { reason: `the discount ${formatNumber(discount)} is not between 0 and 1` };
  const horizon = spec.horizon?.value;
  if (horizon !== undefined && !(Number.isInteger(horizon) && horizon >= 1 && horizon <= 2147483647)) {
    return { reason: `the horizon ${formatNumber(horizon)} is not a whole number of steps of at least 1` };
  }
  if (spec.states.length === 0) return { reason: 'the spec declares no states' };

  const stateById = new Map<string, SpecState>();
  for (const state of spec.states) if (!stateById.has(state.id)) stateById.set(state.id, state);

  // Start distribution.
  if (spec.start.length === 0) return { reason: 'the spec has no start state' };
  const startProbability = new Map<string, number>();
  let startSum = 0;
  for (const entry of spec.start) {
    if (!stateById.has(entry.state)) return { reason: `the start names ${quote(entry.state)}, which is not a declared state` };
    if (!(entry.probability >= 0 && entry.probability <= 1)) return { reason: `the start probability of ${quote(entry.state)} is ${formatNumber(entry.probability)}, not between 0 and 1` };
    startProbability.set(entry.state, (startProbability.get(entry.state) ?? 0) + entry.probability);
    startSum += entry.probability;
  }
  if (Math.abs(startSum - 1) > PROBABILITY_SUM_TOLERANCE) return { reason: `the start probabilities add up to ${formatNumber(startSum)}, not 1` };

  // Shaping potential.
  for (const entry of spec.potential) {
    if (!stateById.has(entry.state)) return { reason: `the shaping potential names ${quote(entry.state)}, which is not a declared state` };
    if (!Number.isFinite(entry.value)) return { reason: `the shaping potential of ${quote(entry.state)} is ${formatNumber(entry.value)}, not a finite number` };
  }

  const termNames = termNamesOf(spec);
  const tracked = new Set(termNames);
  // Room for every written outcome up front (an upper bound: repeated pairs and terminal sources are skipped).
  let writtenOutcomes = 0;
  for (const transition of spec.transitions) writtenOutcomes += transition.outcomes.length;
  const reserve = { states: stateById.size, choices: spec.transitions.length, outcomes: writtenOutcomes };
  const builder = new ModelBuilder({ discount, horizon, maximize: spec.objective !== 'minimize', terms: termNames, reserve });
  for (const state of stateById.values()) builder.addState(state.id, state.terminal, state.span, state.label);

  let potential: Float64Array | undefined;
  if (spec.potential.length > 0) {
    potential = new Float64Array(stateById.size);
    for (const entry of spec.potential) potential[builder.indexOf(entry.state)!] = entry.value;
  }

  const actionSets = new Map<string, ReadonlySet<string> | undefined>();
  const actionsOf = (state: SpecState): ReadonlySet<string> | undefined => {
    if (!actionSets.has(state.id)) {
      const list = actionSetOf(spec, state);
      actionSets.set(state.id, list ? new Set(list) : undefined);
    }
    return actionSets.get(state.id);
  };
  for (const state of stateById.values()) {
    if (state.terminalUnread) return { reason: `the terminal kind of ${quote(state.id)} could not be read` };
    if (!state.terminal && !actionsOf(state)?.size) return { reason: `the non-terminal state ${quote(state.id)} offers no action, so the episode cannot continue there` };
  }
  const defined = new Set<string>();

  for (let index = 0; index < spec.transitions.length; index++) {
    const transition = spec.transitions[index];
    const from = stateById.get(transition.from);
    const where = (): string => `transitions[${transition.sourceIndex}]`;
    if (!from) return { reason: `${where()} leaves ${quote(transition.from)}, which is not a declared state` };
    // Entering a terminal ends the episode: what a terminal "does" is never used.
    if (from.terminal) continue;
    const offered = actionsOf(from);
    if (!offered?.has(transition.action)) return { reason: `${where()} takes ${quote(transition.action)} in ${quote(from.id)}, which does not offer that action` };
    const pairKey = `${from.id}\u0000${transition.action}`;
    // The first definition of a (state, action) pair wins; later ones are reported, not used.
    if (defined.has(pairKey)) continue;
    defined.add(pairKey);
    // Messages are built only on failure: this loop runs once per transition of large specs.
    const label = (): string => `${where()} (${arrow(from.id, transition.action)})`;
    if (transition.incomplete) return { reason: `${label()} could not be read completely` };

    const stateIndex = builder.indexOf(from.id)!;
    const outcomes: Array<{ target: number; probability: number; reward: number; terms: Array<[string, number]>; shaping?: number }> = [];
    let sum = 0;
    for (const outcome of transition.outcomes) {
      const target = builder.indexOf(outcome.state);
      if (target === undefined) return { reason: `${label()} leads to ${quote(outcome.state)}, which is not a declared state` };
      if (!(outcome.probability >= 0 && outcome.probability <= 1)) return { reason: `${label()} gives ${quote(outcome.state)} the probability ${formatNumber(outcome.probability)}, not between 0 and 1` };
      sum += outcome.probability;
      const { reward, terms, problem } = sumReward(outcome.reward, tracked);
      if (problem) return { reason: `${label()} has the reward ${problem} toward ${quote(outcome.state)}, not a finite number` };
      let shaping: number | undefined;
      if (potential) {
        // Potential-based shaping F = discount * Phi(s') - Phi(s) (Ng, Harada and Russell, 1999).
        shaping = discount * potential[target] - potential[stateIndex];
      }
      outcomes.push({ target, probability: outcome.probability, reward: reward + (shaping ?? 0), terms, shaping });
    }
    if (Math.abs(sum - 1) > PROBABILITY_SUM_TOLERANCE) return { reason: `${label()} has outcome probabilities that add up to ${formatNumber(sum)}, not 1` };
    builder.addChoice(stateIndex, transition.action, index, outcomes);
  }

  // A transition without a readable from or action is the cause of any pair that looks missing.
  const unread = spec.unreadTransitions?.length ?? 0;
  if (unread > 0) return { reason: `${unread === 1 ? 'a transition' : `${unread} transitions`} could not be read (no readable "from" or "action")` };
  for (const state of stateById.values()) {
    if (state.terminal) continue;
    for (const action of actionsOf(state)!) {
      if (!defined.has(`${state.id}\u0000${action}`)) return { reason: `${quote(state.id)} offers ${quote(action)}, but no transition says what it does` };
    }
  }

  const start = [...startProbability].map(([id, probability]) => ({ state: builder.indexOf(id)!, probability }));
  return { model: builder.finish(start, potential) };
}

function sumReward(parts: readonly RewardPart[], tracked: ReadonlySet<string>): { reward: number; terms: Array<[string, number]>; problem?: string } {
  let reward = 0;
  const terms: Array<[string, number]> = [];
  for (const part of parts) {
    if (!Number.isFinite(part.value)) return { reward, terms, problem: formatNumber(part.value) };
    reward += part.value;
    if (part.term !== null && tracked.has(part.term)) terms.push([part.term, part.value]);
  }
  return { reward, terms };
}
