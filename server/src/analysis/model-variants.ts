/**
 * Variants of a compiled model that let the one analysis answer questions about other rewards or
 * fixed policies: the same MDP with a different reward vector (for "what is optimal without the
 * shaping"), or with only some choices kept (a model that keeps exactly one choice per state is the
 * Markov chain of that policy, so its "optimal" values are the policy's values).
 */
import type { CompiledModel } from '../model/compiled';

/** The same MDP paying `reward` on each outcome, without named terms or shaping. */
export function withReward(model: CompiledModel, reward: Float64Array): CompiledModel {
  return {
    ...model,
    outcomeReward: reward,
    termNames: [],
    outcomeTermReward: [],
    outcomePotentialReward: undefined,
    potential: undefined,
  };
}

export interface RestrictedModel {
  model: CompiledModel;
  /** For each choice of the restricted model, the choice of the original model it copies. */
  choiceOrigin: Int32Array;
}

/**
 * The MDP with only the choices where `keep[c]` is 1 (states, outcomes and rewards otherwise the
 * same). Every non-terminal state must keep at least one choice; the caller guarantees it.
 */
export function restrictChoices(model: CompiledModel, keep: Uint8Array): RestrictedModel {
  let choices = 0;
  let outcomes = 0;
  for (let c = 0; c < model.choiceCount; c++) {
    if (!keep[c]) continue;
    choices++;
    outcomes += model.outcomeStart[c + 1] - model.outcomeStart[c];
  }
  const choiceStart = new Int32Array(model.stateCount + 1);
  const choiceAction = new Int32Array(choices);
  const choiceTransition = new Int32Array(choices);
  const choiceOrigin = new Int32Array(choices);
  const outcomeStart = new Int32Array(choices + 1);
  const outcomeTarget = new Int32Array(outcomes);
  const outcomeProb = new Float64Array(outcomes);
  const outcomeReward = new Float64Array(outcomes);
  const outcomeTermReward = model.outcomeTermReward.map(() => new Float64Array(outcomes));
  const outcomePotentialReward = model.outcomePotentialReward ? new Float64Array(outcomes) : undefined;
  let c2 = 0;
  let k2 = 0;
  for (let s = 0; s < model.stateCount; s++) {
    choiceStart[s] = c2;
    for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
      if (!keep[c]) continue;
      choiceAction[c2] = model.choiceAction[c];
      choiceTransition[c2] = model.choiceTransition[c];
      choiceOrigin[c2] = c;
      outcomeStart[c2] = k2;
      for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++, k2++) {
        outcomeTarget[k2] = model.outcomeTarget[k];
        outcomeProb[k2] = model.outcomeProb[k];
        outcomeReward[k2] = model.outcomeReward[k];
        for (let t = 0; t < outcomeTermReward.length; t++) outcomeTermReward[t][k2] = model.outcomeTermReward[t][k];
        if (outcomePotentialReward) outcomePotentialReward[k2] = model.outcomePotentialReward![k];
      }
      c2++;
    }
  }
  choiceStart[model.stateCount] = c2;
  outcomeStart[choices] = k2;
  return {
    model: {
      ...model,
      choiceCount: choices,
      outcomeCount: outcomes,
      choiceStart,
      choiceAction,
      choiceTransition,
      outcomeStart,
      outcomeTarget,
      outcomeProb,
      outcomeReward,
      outcomeTermReward,
      outcomePotentialReward,
    },
    choiceOrigin,
  };
}

/** The Markov chain of a deterministic policy (state -> choice of the original model). */
export function policyChain(model: CompiledModel, policy: Int32Array): RestrictedModel {
  const keep = new Uint8Array(model.choiceCount);
  for (let s = 0; s < model.stateCount; s++) if (model.terminal[s] === 0 && policy[s] >= 0) keep[policy[s]] = 1;
  return restrictChoices(model, keep);
}
