/**
 * Compiles a ParsedSpec into a CompiledModel (dense ids, CSR arrays). Compilation succeeds only
 * for a well-defined finite MDP; otherwise it returns the first reason it is not, in one sentence,
 * and the structural rules explain every problem with its position.
 */
import { ModelBuilder, type CompiledModel } from './compiled';
import { arrow, formatNumber, quote } from '../load/names';
import type { ParsedSpec, RewardPart, SpecState } from '../load/types';

export interface CompileResult {
  model?: CompiledModel;
  /** Why there is no model: the first problem found, in one sentence. */
  reason?: string;
  /** Set when compiling failed through a bug of ours rather than a problem of the spec. */
  internalError?: string;
  /**
   * When there is no model but the states could be read: the declared part, with the broken edges
   * left out, for the rules that need only the graph. Never analysed for values.
   */
  declared?: { model: CompiledModel; brokenStates: Uint8Array };
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

/**
 * Builds the model of every well-formed part and notes the first problem. Without a problem that is
 * the compiled model; with one, it is only the declared part (see CompileResult.declared), and the
 * problem is the reason there is no model.
 */
function compileChecked(spec: ParsedSpec): CompileResult {
  let reason: string | undefined;
  const note = (problem: string): void => {
    reason ??= problem;
  };
  const written = spec.discount?.value;
  if (written === undefined) note('the spec has no discount, so returns are not defined');
  else if (!Number.isFinite(written) || written < 0 || written > 1)
    note(`the discount ${formatNumber(written)} is not between 0 and 1`);
  // The declared part of a spec without a valid discount is only read for its graph.
  const discount = reason === undefined ? written! : 1;
  let horizon = spec.horizon?.value;
  if (horizon !== undefined && !(Number.isInteger(horizon) && horizon >= 1 && horizon <= 2147483647)) {
    note(`the horizon ${formatNumber(horizon)} is not a whole number of steps of at least 1`);
    horizon = undefined;
  }
  if (spec.states.length === 0) return { reason: reason ?? 'the spec declares no states' };

  const stateById = new Map<string, SpecState>();
  for (const state of spec.states) if (!stateById.has(state.id)) stateById.set(state.id, state);

  // Start distribution.
  if (spec.start.length === 0) note('the spec has no start state');
  const startProbability = new Map<string, number>();
  let startSum = 0;
  for (const entry of spec.start) {
    if (!stateById.has(entry.state)) {
      note(`the start names ${quote(entry.state)}, which is not a declared state`);
      continue;
    }
    if (!(entry.probability >= 0 && entry.probability <= 1)) {
      note(`the start probability of ${quote(entry.state)} is ${formatNumber(entry.probability)}, not between 0 and 1`);
      continue;
    }
    startProbability.set(entry.state, (startProbability.get(entry.state) ?? 0) + entry.probability);
    startSum += entry.probability;
  }
  if (spec.start.length > 0 && Math.abs(startSum - 1) > PROBABILITY_SUM_TOLERANCE)
    note(`the start probabilities add up to ${formatNumber(startSum)}, not 1`);

  // Shaping potential.
  const potentialEntries = spec.potential.filter((entry) => {
    if (!stateById.has(entry.state))
      note(`the shaping potential names ${quote(entry.state)}, which is not a declared state`);
    else if (!Number.isFinite(entry.value))
      note(`the shaping potential of ${quote(entry.state)} is ${formatNumber(entry.value)}, not a finite number`);
    else return true;
    return false;
  });

  const termNames = termNamesOf(spec);
  const tracked = new Set(termNames);
  // Room for every written outcome up front (an upper bound: repeated pairs and terminal sources are skipped).
  let writtenOutcomes = 0;
  for (const transition of spec.transitions) writtenOutcomes += transition.outcomes.length;
  const reserve = { states: stateById.size, choices: spec.transitions.length, outcomes: writtenOutcomes };
  const builder = new ModelBuilder({
    discount,
    horizon,
    maximize: spec.objective !== 'minimize',
    terms: termNames,
    reserve,
  });
  for (const state of stateById.values()) builder.addState(state.id, state.terminal, state.span, state.label);
  // States whose written dynamics lost a part to a problem: what they do is not fully known.
  const brokenStates = new Uint8Array(stateById.size);

  let potential: Float64Array | undefined;
  if (spec.potential.length > 0) {
    potential = new Float64Array(stateById.size);
    for (const entry of potentialEntries) potential[builder.indexOf(entry.state)!] = entry.value;
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
    if (state.terminalUnread) {
      note(`the terminal kind of ${quote(state.id)} could not be read`);
      brokenStates[builder.indexOf(state.id)!] = 1;
      continue;
    }
    if (!state.terminal && !actionsOf(state)?.size) {
      note(`the non-terminal state ${quote(state.id)} offers no action, so the episode cannot continue there`);
      brokenStates[builder.indexOf(state.id)!] = 1;
    }
  }
  const defined = new Set<string>();

  for (let index = 0; index < spec.transitions.length; index++) {
    const transition = spec.transitions[index];
    const from = stateById.get(transition.from);
    const where = (): string => `transitions[${transition.sourceIndex}]`;
    if (!from) {
      note(`${where()} leaves ${quote(transition.from)}, which is not a declared state`);
      continue;
    }
    // Entering a terminal ends the episode: what a terminal "does" is never used.
    if (from.terminal) continue;
    const stateIndex = builder.indexOf(from.id)!;
    const offered = actionsOf(from);
    if (!offered?.has(transition.action)) {
      note(`${where()} takes ${quote(transition.action)} in ${quote(from.id)}, which does not offer that action`);
      brokenStates[stateIndex] = 1;
      continue;
    }
    const pairKey = `${from.id}\u0000${transition.action}`;
    // The first definition of a (state, action) pair wins; later ones are reported, not used.
    if (defined.has(pairKey)) continue;
    defined.add(pairKey);
    // Messages are built only on failure: this loop runs once per transition of large specs.
    const label = (): string => `${where()} (${arrow(from.id, transition.action)})`;
    if (transition.incomplete) {
      note(`${label()} could not be read completely`);
      brokenStates[stateIndex] = 1;
      continue;
    }

    const outcomes: Array<{
      target: number;
      probability: number;
      reward: number;
      terms: Array<[string, number]>;
      shaping?: number;
    }> = [];
    let sum = 0;
    let broken = false;
    for (const outcome of transition.outcomes) {
      const target = builder.indexOf(outcome.state);
      if (target === undefined) {
        note(`${label()} leads to ${quote(outcome.state)}, which is not a declared state`);
        broken = true;
        continue;
      }
      if (!(outcome.probability >= 0 && outcome.probability <= 1)) {
        note(
          `${label()} gives ${quote(outcome.state)} the probability ${formatNumber(outcome.probability)}, not between 0 and 1`,
        );
        broken = true;
        continue;
      }
      sum += outcome.probability;
      const { reward, terms, problem } = sumReward(outcome.reward, tracked);
      if (problem) {
        note(`${label()} has the reward ${problem} toward ${quote(outcome.state)}, not a finite number`);
        broken = true;
        continue;
      }
      let shaping: number | undefined;
      if (potential) {
        // Potential-based shaping F = discount * Phi(s') - Phi(s) (Ng, Harada and Russell, 1999).
        shaping = discount * potential[target] - potential[stateIndex];
      }
      outcomes.push({ target, probability: outcome.probability, reward: reward + (shaping ?? 0), terms, shaping });
    }
    if (!broken && Math.abs(sum - 1) > PROBABILITY_SUM_TOLERANCE) {
      note(`${label()} has outcome probabilities that add up to ${formatNumber(sum)}, not 1`);
      broken = true;
    }
    if (broken) brokenStates[stateIndex] = 1;
    if (outcomes.length > 0) builder.addChoice(stateIndex, transition.action, index, outcomes);
  }

  // A transition without a readable from or action is the cause of any pair that looks missing.
  const unread = spec.unreadTransitions?.length ?? 0;
  if (unread > 0)
    return {
      reason: `${unread === 1 ? 'a transition' : `${unread} transitions`} could not be read (no readable "from" or "action")`,
    };
  for (const state of stateById.values()) {
    if (state.terminal) continue;
    for (const action of actionsOf(state) ?? []) {
      if (!defined.has(`${state.id}\u0000${action}`)) {
        note(`${quote(state.id)} offers ${quote(action)}, but no transition says what it does`);
        brokenStates[builder.indexOf(state.id)!] = 1;
      }
    }
  }

  const start = [...startProbability].map(([id, probability]) => ({ state: builder.indexOf(id)!, probability }));
  const model = builder.finish(start, potential);
  if (reason === undefined) return { model };
  return { reason, declared: { model, brokenStates } };
}

function sumReward(
  parts: readonly RewardPart[],
  tracked: ReadonlySet<string>,
): { reward: number; terms: Array<[string, number]>; problem?: string } {
  let reward = 0;
  const terms: Array<[string, number]> = [];
  for (const part of parts) {
    if (!Number.isFinite(part.value)) return { reward, terms, problem: formatNumber(part.value) };
    reward += part.value;
    if (part.term !== null && tracked.has(part.term)) terms.push([part.term, part.value]);
  }
  return { reward, terms };
}
