/**
 * Derived structure of a compiled model that several algorithms share: the owner state of each
 * choice and the predecessor lists (which choices can lead into a state). Built once per model
 * and kept in flat typed arrays so that a million-state model stays within a few hundred MB.
 */
import type { CompiledModel } from '../model/compiled';

export interface ModelGraph {
  model: CompiledModel;
  /** choiceState[c]: the state that offers choice c. */
  choiceState: Int32Array;
  /**
   * Predecessor lists in CSR form: the choices with an outcome of positive probability into state t
   * are predChoice[predStart[t] .. predStart[t+1]-1] (a choice appears once per such outcome).
   */
  predStart: Int32Array;
  predChoice: Int32Array;
  /**
   * 1 for states that end the episode: declared terminals, and (defensively) states that offer no
   * choice at all, which the compiler never produces for a well-formed spec.
   */
  absorbing: Uint8Array;
}

/**
 * The graph with only the `allowed` choices in its predecessor lists (the chain of one policy):
 * searches that read many of a policy's predecessors then skip the other choices' entries
 * without reading them. Everything else is the model's.
 */
export function graphWithin(graph: ModelGraph, allowed: Uint8Array): ModelGraph {
  const { predStart, predChoice } = graph;
  const n = graph.model.stateCount;
  const start = new Int32Array(n + 1);
  let kept = 0;
  for (let t = 0; t < n; t++) {
    for (let i = predStart[t]; i < predStart[t + 1]; i++) if (allowed[predChoice[i]]) kept++;
    start[t + 1] = kept;
  }
  const choices = new Int32Array(kept);
  let fill = 0;
  for (let t = 0; t < n; t++)
    for (let i = predStart[t]; i < predStart[t + 1]; i++) if (allowed[predChoice[i]]) choices[fill++] = predChoice[i];
  return { ...graph, predStart: start, predChoice: choices };
}

const cache = new WeakMap<CompiledModel, ModelGraph>();

/** The graph of a model, built once and shared by the analysis and the rules that need it. */
export function graphOf(model: CompiledModel): ModelGraph {
  let graph = cache.get(model);
  if (!graph) {
    graph = buildModelGraph(model);
    cache.set(model, graph);
  }
  return graph;
}

export function buildModelGraph(model: CompiledModel): ModelGraph {
  const n = model.stateCount;
  const { choiceStart, outcomeStart, outcomeTarget, outcomeProb } = model;
  const choiceState = new Int32Array(model.choiceCount);
  for (let s = 0; s < n; s++) {
    for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) choiceState[c] = s;
  }
  const predStart = new Int32Array(n + 1);
  for (let k = 0; k < model.outcomeCount; k++) {
    if (outcomeProb[k] > 0) predStart[outcomeTarget[k] + 1]++;
  }
  for (let s = 0; s < n; s++) predStart[s + 1] += predStart[s];
  const predChoice = new Int32Array(predStart[n]);
  const fill = predStart.slice(0, n);
  for (let c = 0; c < model.choiceCount; c++) {
    for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) {
      if (outcomeProb[k] > 0) predChoice[fill[outcomeTarget[k]]++] = c;
    }
  }
  const absorbing = new Uint8Array(n);
  for (let s = 0; s < n; s++) {
    if (model.terminal[s] !== 0 || choiceStart[s] === choiceStart[s + 1]) absorbing[s] = 1;
  }
  return { model, choiceState, predStart, predChoice, absorbing };
}

/**
 * The expected immediate value of every choice: the sum over its outcomes of probability times
 * `outcomeValue[k]`. A sum that cancels to within 1e-12 of its magnitude is set to exactly 0:
 * spec probabilities are decimals that binary floating point cannot represent exactly, and the
 * end-component analysis must see "pays nothing on average" as zero (common practice).
 */
export function expectedChoiceValues(model: CompiledModel, outcomeValue: Float64Array): Float64Array {
  const out = new Float64Array(model.choiceCount);
  const { outcomeStart, outcomeProb } = model;
  for (let c = 0; c < model.choiceCount; c++) {
    let sum = 0;
    let magnitude = 0;
    for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) {
      const v = outcomeProb[k] * outcomeValue[k];
      sum += v;
      magnitude += Math.abs(v);
    }
    out[c] = Math.abs(sum) <= 1e-12 * magnitude ? 0 : sum;
  }
  return out;
}

/** The expected reward of each choice (shaping included, as the agent receives it). */
export function expectedRewards(model: CompiledModel): Float64Array {
  return expectedChoiceValues(model, model.outcomeReward);
}

/** Per choice, the probability that it enters a terminal of the given code (TERMINAL_CODE). */
export function terminalEntryProbabilities(model: CompiledModel, terminalCode: number): Float64Array {
  const out = new Float64Array(model.choiceCount);
  const { outcomeStart, outcomeProb, outcomeTarget, terminal } = model;
  for (let c = 0; c < model.choiceCount; c++) {
    let sum = 0;
    for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) {
      if (terminal[outcomeTarget[k]] === terminalCode) sum += outcomeProb[k];
    }
    out[c] = sum;
  }
  return out;
}
