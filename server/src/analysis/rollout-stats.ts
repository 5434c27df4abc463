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
  policy: 'random' | 'optimal';
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
}

/** Rollout figures attached to a file report, keyed by the policy that was followed. */
export interface RolloutReport {
  random?: RolloutStats;
  optimal?: RolloutStats;
}
