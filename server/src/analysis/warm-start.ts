/**
 * Warm starts: the solved values of one analysis, keyed by state id, handed to the next analysis of
 * an edited spec as starting guesses. A guess only ever chooses where a solver starts (the first
 * Krylov iterate, the first vector of value iteration, the first policy of policy iteration);
 * every bound is still verified by the same certificate as on a cold start, so a wrong or stale
 * guess costs time, never soundness. Plain data: it crosses thread boundaries by structured clone.
 */
import type { CompiledModel } from '../model/compiled';

/** The solved values of one analysis, in its own state order. */
export interface WarmStart {
  /** The state ids, concatenated: id(s) = ids.slice(idStart[s], idStart[s + 1]). One string clones far faster than many. */
  ids: string;
  idStart: Int32Array;
  /** The discount the values were solved at (values of the discounted problems are dropped when it changes). */
  discount: number;
  /**
   * Per solved problem (see problem names in analysis/index.ts): a value per state, NaN where none
   * was solved. Also, under `<system>:error-direction`, each fixed-policy system's error direction
   * and, under `max:policy` and `min:policy`, policy iteration's final policy (total-reward.ts):
   * candidates that the next analysis checks or only starts from, like the values.
   */
  values: Record<string, Float64Array>;
  /** The solutions of analyses derived from this one (e.g. the goal route's chain), by name. */
  derived?: Record<string, WarmStart>;
}

/** Problems solved at discount 1 whatever the model's discount (reach probabilities, lengths): their guesses survive a discount change. */
export const UNDISCOUNTED_PREFIX = 'undiscounted:';

/**
 * The guesses of a previous analysis in the current model's state order (NaN for a state the
 * previous model did not have), or undefined when nothing carries over. States are matched by id,
 * so renamed states start cold and removed ones are ignored.
 */
export function guessesFor(
  model: CompiledModel,
  previous: WarmStart | undefined,
): Map<string, Float64Array> | undefined {
  if (!previous || !(previous.idStart instanceof Int32Array) || typeof previous.ids !== 'string') return undefined;
  const previousCount = previous.idStart.length - 1;
  if (previousCount <= 0) return undefined;
  const { ids, idStart } = previous;
  // The common edit (a reward, a probability) keeps every state in place: then no lookup is needed.
  let same = previousCount === model.stateCount;
  for (let s = 0; s < model.stateCount && same; s++) {
    const id = model.stateIds[s];
    if (idStart[s + 1] - idStart[s] !== id.length || !ids.startsWith(id, idStart[s])) same = false;
  }
  let into: Int32Array | undefined;
  if (!same) {
    into = new Int32Array(previousCount);
    for (let p = 0; p < previousCount; p++) into[p] = model.stateIndex.get(ids.slice(idStart[p], idStart[p + 1])) ?? -1;
  }
  const out = new Map<string, Float64Array>();
  for (const [name, values] of Object.entries(previous.values)) {
    if (!(values instanceof Float64Array) || values.length !== previousCount) continue;
    if (previous.discount !== model.discount && !name.startsWith(UNDISCOUNTED_PREFIX)) continue;
    if (same) {
      out.set(name, values);
      continue;
    }
    const guess = new Float64Array(model.stateCount).fill(NaN);
    for (let p = 0; p < previousCount; p++) if (into![p] >= 0) guess[into![p]] = values[p];
    out.set(name, guess);
  }
  return out.size > 0 ? out : undefined;
}

/** The values solved in this analysis, packed for the next one. */
export function warmStartOf(model: CompiledModel, solved: Map<string, Float64Array>): WarmStart {
  const idStart = new Int32Array(model.stateCount + 1);
  for (let s = 0; s < model.stateCount; s++) idStart[s + 1] = idStart[s] + model.stateIds[s].length;
  return { ids: model.stateIds.join(''), idStart, discount: model.discount, values: Object.fromEntries(solved) };
}

/**
 * The guesses of the states `states` lists, in that order (NaN, or `fallback` when given, where
 * there is none). A loop, not Float64Array.from with a mapping function, which goes through an
 * iterator and boxes every number: 7x slower on 400k rows, and the 100k-state analysis' largest
 * source of garbage.
 */
export function guessesAt(guess: Float64Array, states: Int32Array, fallback?: number): Float64Array {
  const out = new Float64Array(states.length);
  for (let i = 0; i < states.length; i++) {
    const v = guess[states[i]];
    out[i] = fallback === undefined || Number.isFinite(v) ? v : fallback;
  }
  return out;
}

/** The guess of one state, or `fallback` where there is none. */
export function guessAt(guess: Float64Array | undefined, s: number, fallback: number): number {
  const v = guess ? guess[s] : NaN;
  return Number.isFinite(v) ? v : fallback;
}
