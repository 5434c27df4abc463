import type { WarmStart } from './warm-start';
import type { CompiledModel } from '../model/compiled';

/** A closed interval known to contain the true value; bounds may be +-Infinity. */
export interface Interval {
  lower: number;
  upper: number;
}

/** Per-state sound bounds: lower[s] <= true value of s <= upper[s]. */
export interface Bounds {
  lower: Float64Array;
  upper: Float64Array;
}

/**
 * Probability, per state, that an episode started there ends in each terminal kind under a fixed
 * policy; `none` is the probability that it never ends (or is cut by the horizon).
 */
export interface ReachProbabilities {
  goal: Float64Array;
  failure: Float64Array;
  neutral: Float64Array;
  none: Float64Array;
}

export interface ReachAtStart {
  goal: number;
  failure: number;
  neutral: number;
  none: number;
}

/** What one policy (optimal, worst or uniformly random) does. */
export interface PolicyAnalysis {
  values: Bounds;
  reach: ReachProbabilities;
  /** Expected number of steps until the episode ends (Infinity when it may never end). */
  expectedLength: Float64Array;
  /**
   * For the optimal and the worst policy: a deterministic stationary policy (state -> choice,
   * -1 on terminals) that attains the values. With a horizon, the policy at the first step.
   */
  policy?: Int32Array;
}

/** A maximal end component: a set of states and choices that some policy can stay in forever. */
export interface EndComponent {
  states: Int32Array;
  choices: Int32Array;
  /**
   * The sign of the best long-run mean reward per step that a policy can keep inside the
   * component, in the objective's direction (the largest mean under maximize, the smallest under
   * minimize): 1, 0 or -1; absent when it could not be decided. Under maximize, 1 means staying
   * can earn without bound at discount 1; under minimize, -1 does.
   */
  gainSign?: 1 | 0 | -1;
  /** Sound bounds on that mean, when they were computed numerically (mixed-sign rewards). */
  gain?: Interval;
  /** For gainSign in the objective's favour: per state of `states`, a choice of a policy that stays inside and earns that mean. */
  gainPolicy?: Int32Array;
}

/** Backward induction over time-to-go, for specs with a horizon. */
export interface FiniteHorizonSolution {
  horizon: number;
  /** value[k * stateCount + s]: the optimal value of s with k steps left (k = 0 .. horizon). */
  value: Float64Array;
  /** bestChoice[k * stateCount + s]: a best choice of s with k steps left (k = 1 .. horizon; -1 on terminals and k = 0). */
  bestChoice: Int32Array;
}

export interface TermShare {
  /** The reward term's name; "" for plain numeric rewards, "shaping" for `shaping.potential`. */
  term: string;
  /** Expected discounted total of the term from the start under the optimal policy. */
  value: number;
  /** value divided by the sum of absolute values of every term; 0 for a value within the precision of 0. */
  share: number;
}

export interface StartSummary {
  optimal: Interval;
  worst: Interval;
  random: Interval;
  reach: { optimal: ReachAtStart; random: ReachAtStart };
  /** The best achievable probability of ending in a goal. */
  maxGoalReach: number;
  expectedLength: { optimal: number; random: number };
}

export interface Analysis {
  model: CompiledModel;
  /** 1 where some policy reaches the state from the start with positive probability. */
  reachable: Uint8Array;
  optimal: PolicyAnalysis;
  worst: PolicyAnalysis;
  random: PolicyAnalysis;
  /** Bounds on Q*(s, a) per choice. */
  q: Bounds;
  /** 1 for choices whose Q* equals V* of their state (within the reported precision). */
  isBest: Uint8Array;
  /** Per state, the best achievable probability of ending in a goal. */
  maxGoalReach: Float64Array;
  endComponents: EndComponent[];
  horizon?: FiniteHorizonSolution;
  termShares: TermShare[];
  start: StartSummary;
  /**
   * The largest width of any reported finite bound, values and point figures alike (a point
   * figure whose bounds were wider than the target is NaN: undetermined), and whether every value
   * was solved exactly.
   */
  precision: number;
  exact: boolean;
  /** Sweeps of value or interval iteration spent. */
  iterations: number;
  /** Sparse linear solves spent (each right-hand side counts once). */
  solves: number;
  /** BiCGSTAB iterations over all solves (a measure of the solver's work that load does not skew). */
  krylovIterations: number;
  /** Sweeps of every solve (iterations counts those of the optimal, worst and random values only). */
  sweeps: number;
  /** Solves that started from a previous analysis' values (AnalyzeModelOptions.startFrom). */
  warmStarts: number;
  /** This analysis' solution, for the next analysis of the same spec to start from (AnalyzeModelOptions.keepSolution). */
  solution?: WarmStart;
  /** The previous solution's derived parts (WarmStart.derived), where analyses derived from this one start. */
  derivedStart?: Record<string, WarmStart>;
}
