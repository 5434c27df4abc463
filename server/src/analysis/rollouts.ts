/**
 * Seeded Monte Carlo rollouts and their statistics.
 *
 * Random numbers: xoshiro128** 1.1 (Blackman and Vigna, "Scrambled linear pseudorandom number
 * generators", ACM Transactions on Mathematical Software 47(4), 2021), seeded per episode with
 * SplitMix64 (Steele, Lea and Flood, "Fast splittable pseudorandom number generators", OOPSLA
 * 2014), the seeding its authors recommend. Episode e of seed s starts from the SplitMix64 state
 * s * 2^32 + e, so every episode can be replayed on its own and results do not depend on how the
 * episodes are split into batches. Floats take 53 bits from two outputs.
 *
 * This module is also bundled into the sandbox worker, so it imports types only.
 */
import type { CompiledModel } from '../model/compiled';
import type { Analysis } from './types';

/** Steps after which a rollout without a horizon is stopped (the `episode-never-ends.stepCap` default). */
export const DEFAULT_STEP_CAP = 10000;

/** Weight below which the rest of a discounted return is left out (common practice; see effectiveStepCap). */
export const NEGLIGIBLE_DISCOUNT_WEIGHT = 1e-12;

/**
 * Steps a rollout without a horizon runs at most: the step cap, or fewer when discount^t falls
 * below 1e-12 first, since every later reward then counts at most 1e-12 times its size.
 */
export function effectiveStepCap(discount: number, stepCap: number): number {
  if (!(discount < 1)) return stepCap;
  if (discount <= 0) return Math.min(stepCap, 1);
  return Math.min(stepCap, Math.ceil(Math.log(NEGLIGIBLE_DISCOUNT_WEIGHT) / Math.log(discount)));
}

const MASK64 = (1n << 64n) - 1n;

/** SplitMix64: returns the next output and advances `state`. */
function splitMix64(state: { value: bigint }): bigint {
  state.value = (state.value + 0x9e3779b97f4a7c15n) & MASK64;
  let z = state.value;
  z = ((z ^ (z >> 30n)) * 0xbf58476d1ce4e5b9n) & MASK64;
  z = ((z ^ (z >> 27n)) * 0x94d049bb133111ebn) & MASK64;
  return z ^ (z >> 31n);
}

/** xoshiro128** 1.1, 32-bit outputs; `seedEpisode` makes it reproducible per (seed, episode, stream). */
export class Xoshiro128 {
  private s0 = 1;
  private s1 = 0;
  private s2 = 0;
  private s3 = 0;

  constructor(seed = 1, episode = 0, stream = 0) {
    this.seedEpisode(seed, episode, stream);
  }

  /** Stream 0 is the model's, stream 1 the policy's: two independent generators per episode. */
  seedEpisode(seed: number, episode: number, stream = 0): void {
    const state = {
      value: (BigInt.asUintN(32, BigInt(Math.trunc(seed))) << 32n) | BigInt.asUintN(32, BigInt(episode)),
    };
    for (let i = 0; i < stream; i++) {
      splitMix64(state);
      splitMix64(state);
    }
    const a = splitMix64(state);
    const b = splitMix64(state);
    this.s0 = Number(a & 0xffffffffn) | 0;
    this.s1 = Number(a >> 32n) | 0;
    this.s2 = Number(b & 0xffffffffn) | 0;
    this.s3 = Number(b >> 32n) | 0;
    // The all-zero state is the one state xoshiro cannot leave; SplitMix64 practically never gives it.
    if ((this.s0 | this.s1 | this.s2 | this.s3) === 0) this.s0 = 1;
  }

  /** The next 32-bit output, as an unsigned integer. */
  nextUint32(): number {
    const s1 = this.s1;
    const x = Math.imul(s1, 5);
    const result = Math.imul((x << 7) | (x >>> 25), 9);
    const t = s1 << 9;
    this.s2 ^= this.s0;
    this.s3 ^= this.s1;
    this.s1 ^= this.s2;
    this.s0 ^= this.s3;
    this.s2 ^= t;
    this.s3 = (this.s3 << 11) | (this.s3 >>> 21);
    return result >>> 0;
  }

  /** A float in [0, 1) with 53 random bits. */
  nextFloat(): number {
    const high = this.nextUint32() >>> 5;
    const low = this.nextUint32() >>> 6;
    return (high * 67108864 + low) / 9007199254740992;
  }

  /** A whole number in [0, n), n >= 1. */
  nextInt(n: number): number {
    return Math.floor(this.nextFloat() * n);
  }
}

/** Episode end codes in `EpisodeRecords.ends`. */
export const END_NONE = 0;
export const END_GOAL = 1;
export const END_FAILURE = 2;
export const END_NEUTRAL = 3;
/** The episode hit the rollout step cap (no horizon) without ending. */
export const END_STEP_CAP = 4;

/** Raw per-episode results of a batch of rollouts. */
export interface EpisodeRecords {
  /** Discounted return of each episode. */
  returns: Float64Array;
  /** Steps taken. */
  lengths: Int32Array;
  /** END_* code per episode. */
  ends: Uint8Array;
}

// The figures' types live in rollout-stats.ts (the TypeScript loader's evidence holds them too).
export type { Histogram, Percentiles, RolloutReport, RolloutStats, SamplingCost } from './rollout-stats';
import type { Histogram, Percentiles, RolloutReport, RolloutStats, SamplingCost } from './rollout-stats';

/**
 * The p-quantile of sorted data by linear interpolation between order statistics: definition 7
 * of Hyndman and Fan, "Sample quantiles in statistical packages", The American Statistician 50(4),
 * 1996 (the default of R and NumPy).
 */
export function quantileSorted(sorted: ArrayLike<number>, p: number): number {
  const n = sorted.length;
  if (n === 0) return NaN;
  const h = (n - 1) * p;
  const low = Math.floor(h);
  const high = Math.min(low + 1, n - 1);
  return sorted[low] + (h - low) * (sorted[high] - sorted[low]);
}

function percentilesOf(sorted: ArrayLike<number>): Percentiles {
  return {
    p5: quantileSorted(sorted, 0.05),
    p25: quantileSorted(sorted, 0.25),
    p50: quantileSorted(sorted, 0.5),
    p75: quantileSorted(sorted, 0.75),
    p95: quantileSorted(sorted, 0.95),
  };
}

/** Counts sorted data into `bins` equal-width bins between its first and last element. */
export function histogramOf(sorted: ArrayLike<number>, bins = 20): Histogram {
  const n = sorted.length;
  const counts = new Array<number>(bins).fill(0);
  if (n === 0) return { lower: 0, upper: 0, counts };
  const lower = sorted[0];
  const upper = sorted[n - 1];
  const width = (upper - lower) / bins;
  for (let i = 0; i < n; i++) {
    const bin = width > 0 ? Math.min(bins - 1, Math.floor((sorted[i] - lower) / width)) : 0;
    counts[bin]++;
  }
  return { lower, upper, counts };
}

/**
 * Mean with a 95% interval from the normal approximation (mean +- 1.96 standard errors, standard
 * error from the sample standard deviation with n - 1), the usual Monte Carlo interval.
 */
export function meanWithInterval(values: ArrayLike<number>): {
  mean: number;
  standardError: number;
  lower: number;
  upper: number;
} {
  const n = values.length;
  if (n === 0) return { mean: NaN, standardError: NaN, lower: NaN, upper: NaN };
  let sum = 0;
  for (let i = 0; i < n; i++) sum += values[i];
  const mean = sum / n;
  // Two-pass variance: the sum of squared deviations is numerically stable for these sizes.
  let squares = 0;
  for (let i = 0; i < n; i++) squares += (values[i] - mean) ** 2;
  const standardError = n > 1 ? Math.sqrt(squares / (n - 1) / n) : Infinity;
  return { mean, standardError, lower: mean - 1.96 * standardError, upper: mean + 1.96 * standardError };
}

/** Summarises raw episode records. */
export function summarizeEpisodes(
  records: EpisodeRecords,
  meta: { policy: RolloutStats['policy']; seed: number; stepCap: number },
): RolloutStats {
  const n = records.returns.length;
  const returns = Float64Array.from(records.returns).sort();
  const lengths = Float64Array.from(records.lengths).sort();
  const estimate = meanWithInterval(records.returns);
  const ends = [0, 0, 0, 0, 0];
  let totalSteps = 0;
  for (let i = 0; i < n; i++) {
    ends[records.ends[i]]++;
    totalSteps += records.lengths[i];
  }
  const share = (count: number) => (n > 0 ? count / n : 0);
  return {
    policy: meta.policy,
    episodes: n,
    seed: meta.seed,
    stepCap: meta.stepCap,
    return: {
      mean: estimate.mean,
      standardError: estimate.standardError,
      ci95: { lower: estimate.lower, upper: estimate.upper },
      min: n > 0 ? returns[0] : NaN,
      max: n > 0 ? returns[n - 1] : NaN,
      percentiles: percentilesOf(returns),
      histogram: histogramOf(returns),
    },
    length: {
      mean: n > 0 ? totalSteps / n : NaN,
      min: n > 0 ? lengths[0] : NaN,
      max: n > 0 ? lengths[n - 1] : NaN,
      percentiles: percentilesOf(lengths),
      histogram: histogramOf(lengths),
    },
    reach: {
      goal: share(ends[END_GOAL]),
      failure: share(ends[END_FAILURE]),
      neutral: share(ends[END_NEUTRAL]),
      none: share(ends[END_NONE] + ends[END_STEP_CAP]),
    },
    stepCapped: ends[END_STEP_CAP],
    totalSteps,
  };
}

/**
 * What a 95% interval of half-width h would cost: n = (1.96 sd / h)^2 episodes from the observed
 * standard deviation (normal approximation; common practice), and how many more than were run.
 * Without a configured h, 1% of the larger of |mean| and 1. NaN figures when sd is unknown.
 */
export function samplingCost(stats: RolloutStats, halfWidth?: number): SamplingCost {
  const n = stats.episodes;
  const sd = stats.return.standardError * Math.sqrt(n);
  const h = halfWidth ?? 0.01 * Math.max(1, Math.abs(stats.return.mean));
  const needed = Number.isFinite(sd) && h > 0 ? Math.ceil(((1.96 * sd) / h) ** 2) : NaN;
  return {
    halfWidth: h,
    defaultHalfWidth: halfWidth === undefined,
    episodesNeeded: needed,
    moreEpisodes: Number.isNaN(needed) ? NaN : Math.max(0, needed - n),
  };
}

/**
 * How a compiled model is driven: uniformly at random over each state's choices, by a fixed
 * stationary choice per state, or (with a horizon) by a choice per state and steps left, laid out
 * as `choiceByStepsLeft[k * stateCount + s]` for k = 1 .. horizon.
 */
export type CompiledPolicy =
  | { kind: 'random' }
  | { kind: 'stationary'; choice: Int32Array }
  | { kind: 'by-steps-left'; choiceByStepsLeft: Int32Array };

/**
 * Rolls out a compiled model: the start state drawn from the start distribution, actions by the
 * policy, outcomes by their probabilities; an episode ends in a terminal, at the horizon, or at
 * `stepCap` steps when there is no horizon.
 */
export function rolloutCompiledModel(
  model: CompiledModel,
  policy: CompiledPolicy,
  options: { episodes: number; seed: number; stepCap: number },
): EpisodeRecords {
  const { episodes, seed } = options;
  const limit = model.horizon ?? effectiveStepCap(model.discount, options.stepCap);
  const returns = new Float64Array(episodes);
  const lengths = new Int32Array(episodes);
  const ends = new Uint8Array(episodes);
  const world = new Xoshiro128();
  const chooser = new Xoshiro128();
  const { choiceStart, outcomeStart, outcomeTarget, outcomeProb, outcomeReward, terminal, startState, startProb } =
    model;
  const stateCount = model.stateCount;
  for (let e = 0; e < episodes; e++) {
    world.seedEpisode(seed, e, 0);
    chooser.seedEpisode(seed, e, 1);
    let state = startState[pickIndex(startProb, 0, startProb.length, world.nextFloat())];
    let total = 0;
    let weight = 1;
    let t = 0;
    let end = END_NONE;
    for (;;) {
      if (terminal[state] !== 0) {
        end = terminal[state];
        break;
      }
      if (t >= limit) {
        end = model.horizon === undefined ? END_STEP_CAP : END_NONE;
        break;
      }
      let choice: number;
      if (policy.kind === 'random') {
        const first = choiceStart[state];
        choice = first + chooser.nextInt(choiceStart[state + 1] - first);
      } else if (policy.kind === 'stationary') {
        choice = policy.choice[state];
      } else {
        choice = policy.choiceByStepsLeft[(limit - t) * stateCount + state];
      }
      const k = pickIndex(outcomeProb, outcomeStart[choice], outcomeStart[choice + 1], world.nextFloat());
      total += weight * outcomeReward[k];
      weight *= model.discount;
      state = outcomeTarget[k];
      t++;
    }
    returns[e] = total;
    lengths[e] = t;
    ends[e] = end;
  }
  return { returns, lengths, ends };
}

/** Inverse-CDF draw of an index in [first, end) with weights `probability`; rounding falls on the last. */
function pickIndex(probability: ArrayLike<number>, first: number, end: number, u: number): number {
  let cumulative = 0;
  for (let i = first; i < end - 1; i++) {
    cumulative += probability[i];
    if (u < cumulative) return i;
  }
  return end - 1;
}

/**
 * Rollouts of an exactly analysed model, on request (config `rollouts` > 0): the return
 * distribution under the optimal policy (by steps left when there is a horizon) and under the
 * uniformly random policy.
 */
export function exactModelRollouts(
  model: CompiledModel,
  analysis: Analysis,
  options: { episodes: number; seed: number; stepCap: number },
): RolloutReport {
  const meta = { seed: options.seed, stepCap: effectiveStepCap(model.discount, options.stepCap) };
  const report: RolloutReport = {
    random: summarizeEpisodes(rolloutCompiledModel(model, { kind: 'random' }, options), { policy: 'random', ...meta }),
  };
  let policy: CompiledPolicy | undefined;
  if (model.horizon !== undefined && analysis.horizon)
    policy = { kind: 'by-steps-left', choiceByStepsLeft: analysis.horizon.bestChoice };
  else if (model.horizon === undefined && analysis.optimal.policy)
    policy = { kind: 'stationary', choice: analysis.optimal.policy };
  if (policy && followsEverywhere(model, policy)) {
    report.optimal = summarizeEpisodes(rolloutCompiledModel(model, policy, options), { policy: 'optimal', ...meta });
  }
  return report;
}

/** True when the policy names a choice of the right state for every non-terminal state. */
function followsEverywhere(model: CompiledModel, policy: CompiledPolicy): boolean {
  if (policy.kind === 'random') return true;
  const table = policy.kind === 'stationary' ? policy.choice : policy.choiceByStepsLeft;
  const layers = policy.kind === 'stationary' ? 1 : table.length / model.stateCount;
  for (let layer = policy.kind === 'stationary' ? 0 : 1; layer < layers; layer++) {
    for (let s = 0; s < model.stateCount; s++) {
      if (model.terminal[s] !== 0) continue;
      const choice = table[layer * model.stateCount + s];
      if (!(choice >= model.choiceStart[s] && choice < model.choiceStart[s + 1])) return false;
    }
  }
  return true;
}
