/** The figures of Monte Carlo rollouts (analysis/rollouts.ts computes them); types only. */

/** Hyndman and Fan definition 7 (as R and NumPy by default). */
export interface Percentiles {
  p5: number;
  p25: number;
  p50: number;
  p75: number;
  p95: number;
}

/** Equal-width bins from `lower` to `upper`; the last bin includes `upper`. */
export interface Histogram {
  lower: number;
  upper: number;
  counts: number[];
}

/** Figures of one batch of rollouts under one policy. */
export interface RolloutStats {
  policy: 'random' | 'optimal' | 'learned';
  episodes: number;
  seed: number;
  /** The cap on steps per episode when the spec has no horizon. */
  stepCap: number;
  return: {
    mean: number;
    standardError: number;
    /** Normal-approximation 95% interval: mean +- 1.96 standard errors (an estimate, not a sound bound). */
    ci95: { lower: number; upper: number };
    min: number;
    max: number;
    percentiles: Percentiles;
    histogram: Histogram;
  };
  length: { mean: number; min: number; max: number; percentiles: Percentiles; histogram: Histogram };
  /** Share of episodes ending in each terminal kind; `none` counts horizon cuts and step caps. */
  reach: { goal: number; failure: number; neutral: number; none: number };
  /** Episodes that hit the step cap without ending (no horizon). */
  stepCapped: number;
  totalSteps: number;
  /** What a narrower interval would cost (see `samplingCost` in rollouts.ts). */
  cost?: SamplingCost;
}

/**
 * Episodes a 95% interval of half-width `halfWidth` needs from the observed standard deviation
 * sd: n = (1.96 sd / halfWidth)^2 (normal approximation; common practice). NaN when sd is unknown.
 */
export interface SamplingCost {
  halfWidth: number;
  /** True when `halfWidth` is the default (1% of the larger of |mean| and 1), not a configured one. */
  defaultHalfWidth: boolean;
  episodesNeeded: number;
  moreEpisodes: number;
}

export interface LearnedAction {
  action: string;
  /** The learned Q; NaN when the action was never tried (no estimate). */
  q: number;
  visits: number;
}

export interface LearnedState {
  key: string;
  /** Steps taken before this state, when the spec has a horizon (the learning state is key and time). */
  step?: number;
  visits: number;
  actions: LearnedAction[];
}

/**
 * The decision between the two best start actions by their learned Q: each is taken first and the
 * greedy policy after, on `episodes` fresh episodes each. `moreEpisodes` per action is what a 95%
 * separation would need: n = 1.96^2 (sd1^2 + sd2^2) / d^2 (normal approximation for a difference
 * of two means; common practice), 0 once decided, Infinity when the two means are equal.
 */
export interface StartDecision {
  key: string;
  best: { action: string; mean: number; standardDeviation: number };
  runnerUp: { action: string; mean: number; standardDeviation: number };
  episodes: number;
  /** (mean of best - mean of runner-up) / its standard error, in the objective's direction. */
  z: number;
  decided: boolean;
  moreEpisodes: number;
}

export type LearningMethod = 'q-learning' | 'monte-carlo';

/** What learning spent and found (sandbox/learn.ts). */
export interface LearningSummary {
  method: LearningMethod;
  visits?: 'first' | 'every';
  epsilon: number;
  budget: { episodes: number; steps: number };
  spent: { episodes: number; steps: number };
  /** Distinct state keys (the spec's `stateKey`, else canonical) met in training. */
  distinctKeys: number;
  /** Learning states: keys, or key and time step with a horizon. */
  learningStates: number;
  /** Steps of the measured episodes taken in states where no action had been tried (a random action there). */
  unlearnedSteps: number;
  /** The first measured episode of the greedy policy: the keys it visited and the actions it took (at most 200 steps). */
  path: { keys: string[]; actions: string[]; truncated: boolean };
  /** The learned values at the most visited states (the start first when it is fixed). */
  states: LearnedState[];
  /**
   * The learned values at the states whose keys the spec's source writes as literals (the editor's
   * hover), learning states with a tried action only, in the order training met them. Not in the JSON output.
   */
  sourceStates?: LearnedState[];
  decision?: StartDecision;
  /** Why there is no decision (one start action, a start that varies, ...). */
  noDecision?: string;
  /** Enumerable models: the exact optimal value of the start beside the learned policy's estimate. */
  exact?: { optimal: { lower: number; upper: number }; gap: number; withinInterval: boolean };
}

/** Rollout figures attached to a file report, keyed by the policy that was followed. */
export interface RolloutReport {
  random?: RolloutStats;
  optimal?: RolloutStats;
  /** The greedy policy of the learned Q, on fresh episodes. */
  learned?: RolloutStats;
  learning?: LearningSummary;
}
