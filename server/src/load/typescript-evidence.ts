/**
 * What the TypeScript loader learns about a `*.mdp.ts` spec besides the ParsedSpec fields: where
 * each member of the default export is written, the unseeded randomness seen in the source and
 * at run time, and what running the model found. The TypeScript rules (model-error,
 * unseeded-randomness, nondeterministic-model, enumeration-limit, episode-never-ends) read it.
 */
import type { RolloutStats } from '../analysis/rollout-stats';
import type { Span } from './span';

/** One member of the `defineMdp({...})` object. */
export interface TypeScriptMember {
  name: string;
  /** The property's name (where findings about the member point). */
  nameSpan: Span;
  /** The whole property. */
  span: Span;
  /** Written as a function (method, arrow, function expression, or a reference to a function declaration). */
  isFunction: boolean;
}

/** A problem found by running model code, placed in the spec's text. */
export interface LocatedProblem {
  kind: string;
  /** The model function that was running ("load" for the module's own code). */
  phase: string;
  message: string;
  span: Span;
  /** "file:line:column" (1-based) when the problem lies in another file than the spec. */
  elsewhere?: string;
  state?: string;
  action?: string;
  episode?: number;
  step?: number;
}

export interface RandomnessSite {
  /** The API called, e.g. "Math.random". */
  api: string;
  span: Span;
  /** Calls counted at run time (absent for sites found by reading the source). */
  count?: number;
  elsewhere?: string;
}

export interface NondeterminismSite {
  message: string;
  span: Span;
}

export interface TypeScriptEvidence {
  members: Record<string, TypeScriptMember>;
  /** "enumerable" with `outcomes`, "sampled" with `sample`. */
  form: 'enumerable' | 'sampled' | 'unknown';
  /** Whether the model code ran; `notExecuted` says why not. */
  executed: boolean;
  notExecuted?: string;
  staticRandomness: RandomnessSite[];
  runtimeRandomness: RandomnessSite[];
  modelErrors: LocatedProblem[];
  /**
   * Structural problems of the MDP the code describes, reported under the rule a JSON spec gets:
   * kind "dead-end" (a non-terminal state without actions) or "probability-sum".
   */
  structuralProblems: LocatedProblem[];
  nonFiniteRewards: Array<LocatedProblem & { episodes?: number }>;
  nondeterminism: NondeterminismSite[];
  /**
   * String and number literals of the source with the key a state of that value gets (its JSON
   * text, as `keyOfState` forms it): where the editor can show what was learned about a state.
   * Import paths are left out; at most STATE_LITERAL_CAP, the first in the text.
   */
  literals?: Array<{ key: string; span: Span }>;
  enumeration?: {
    states: number;
    choices: number;
    outcomes: number;
    milliseconds: number;
    capped: boolean;
    cap: number;
    firstBeyondCap?: string;
    span: Span;
  };
  /** Rollouts of the model code itself (sampled models, or enumerable ones past the state cap). */
  rollouts?: RolloutStats;
  /** The model built from a sampled model's transitions (model/empirical.ts), or why there is none. */
  empirical?: EmpiricalSummary;
}

/** What the empirical model of a sampled model holds, or why it was not built (the empirical-model rule reads it). */
export interface EmpiricalSummary {
  built: boolean;
  /** Why it was not built. */
  reason?: string;
  states: number;
  pairs: number;
  /** Rollout episodes and steps recorded, and samples drawn by the exploration pass. */
  episodes: number;
  steps: number;
  exploreSamples: number;
  /** Keys seen only as targets, never tried. */
  unexplored: number;
  /** Every key seen was tried with every action within the exploration budget. */
  complete: boolean;
  /** Why the exploration stopped early (its budget, or the key cap). */
  exploreCut?: string;
  /** The exploration budget (samples) and the samples each pair was meant to get. */
  exploreBudget: number;
  tries: number;
  span: Span;
}
