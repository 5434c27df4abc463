/**
 * The sign of the long-run mean reward per step inside end components, which decides whether a
 * total (undiscounted) return is +inf, -inf or finite.
 *
 * Exact cases first, by structure alone: if every choice of a component pays at least 0 and one
 * pays more, a policy that uses every choice infinitely often earns a positive mean; if every
 * choice pays at most 0, the best mean is 0 exactly when a sub-end-component of zero-paying
 * choices exists, and negative otherwise; with mixed signs, a sub-end-component of non-negative
 * choices that holds a positive one proves a positive mean (end components as in de Alfaro 1997).
 *
 * Otherwise the sign is read from gain bounds of relative value iteration: for any vector v,
 * min_s (Tv - v)(s) <= g* <= max_s (Tv - v)(s) (A. Odoni, "On finding the maximal gain for Markov
 * decision processes", Operations Research 17(5), 1969; M. Puterman, Markov Decision Processes,
 * 1994, section 8.5), iterated with the aperiodicity transform v <- v + tau (Tv - v) so that the
 * bounds close in. A sign is reported only when the bounds exclude 0; when they cannot (a mean of
 * exactly 0 reached with rewards of both signs, e.g. +1 then -1 forever) the component stays
 * undecided and every value that depends on it is reported as [-inf, inf].
 */
import type { ModelGraph } from './graph';
import type { EndComponentDecomposition } from './end-components';
import { maximalEndComponents } from './end-components';
import { backwardLayering } from './reachability';

export const GAIN_POSITIVE = 1;
export const GAIN_ZERO = 0;
export const GAIN_NEGATIVE = -1;
export const GAIN_UNDECIDED = 2;

/** Iterations of relative value iteration per component at most (besides the work budget). */
const MAX_GAIN_ITERATIONS = 100_000;

export interface MdpGainClasses {
  /**
   * Per MEC, the sign of the best mean reward per step a policy can keep inside it, in the
   * optimiser's direction (sigma times the reward): GAIN_POSITIVE, GAIN_ZERO, GAIN_NEGATIVE or
   * GAIN_UNDECIDED.
   */
  sign: Int8Array;
  /** Per MEC, sound bounds on that best mean (sigma-scaled) where it was bounded numerically; NaN elsewhere. */
  lower: Float64Array;
  upper: Float64Array;
  /**
   * For states of positive MECs, a choice of a stationary policy that stays inside the MEC and
   * earns a positive mean there; -1 elsewhere.
   */
  positivePolicy: Int32Array;
}

/**
 * Classifies every MEC of `mecs` for the objective "maximise sigma * reward". `budget` caps the
 * work (outcome visits) of the numeric step per component.
 */
export function classifyMdpGains(
  graph: ModelGraph,
  mecs: EndComponentDecomposition,
  reward: Float64Array,
  sigma: number,
  budget: number,
): MdpGainClasses {
  const { model } = graph;
  const n = model.stateCount;
  const count = mecs.count;
  const sign = new Int8Array(count);
  const lower = new Float64Array(count).fill(NaN);
  const upper = new Float64Array(count).fill(NaN);
  const positivePolicy = new Int32Array(n).fill(-1);

  // 0: all zero, 1: some positive none negative, 2: some negative none positive, 3: mixed.
  const pattern = new Uint8Array(count);
  for (let i = 0; i < count; i++) {
    let positive = false;
    let negative = false;
    for (const c of mecs.choices[i]) {
      const r = sigma * reward[c];
      if (r > 0) positive = true;
      else if (r < 0) negative = true;
    }
    pattern[i] = (positive ? 1 : 0) + (negative ? 2 : 0);
  }

  // Non-positive components: the best mean is 0 iff zero-paying choices form an end component.
  const nonPositive = subComponents(graph, mecs, pattern, 2, (c) => reward[c] === 0);
  // Mixed components: a non-negative sub-end-component with a positive choice proves a positive mean.
  const mixed = subComponents(graph, mecs, pattern, 3, (c) => sigma * reward[c] >= 0);
  const positiveSub = new Uint8Array(count);
  for (let j = 0; j < mixed.sub.count; j++) {
    if (mixed.sub.choices[j].some((c) => sigma * reward[c] > 0)) positiveSub[mixed.parent[j]] = 1;
  }
  const hasZeroSub = new Uint8Array(count);
  for (let j = 0; j < nonPositive.sub.count; j++) hasZeroSub[nonPositive.parent[j]] = 1;

  // Seeds and domains for building positive policies from structure.
  const positiveSeed = new Uint8Array(n);
  const positiveDomain = new Uint8Array(n);
  const positiveChoice = new Uint8Array(model.choiceCount);
  const markPositiveRegion = (states: Int32Array, choices: Int32Array): void => {
    for (const s of states) positiveDomain[s] = 1;
    for (const c of choices) {
      positiveChoice[c] = 1;
      const s = graph.choiceState[c];
      if (sigma * reward[c] > 0 && positivePolicy[s] < 0) {
        positivePolicy[s] = c;
        positiveSeed[s] = 1;
      }
    }
  };

  const local = new Int32Array(n).fill(-1);
  for (let i = 0; i < count; i++) {
    switch (pattern[i]) {
      case 0:
        sign[i] = GAIN_ZERO;
        break;
      case 1:
        sign[i] = GAIN_POSITIVE;
        markPositiveRegion(mecs.states[i], mecs.choices[i]);
        break;
      case 2:
        sign[i] = hasZeroSub[i] ? GAIN_ZERO : GAIN_NEGATIVE;
        break;
      default:
        if (positiveSub[i]) {
          sign[i] = GAIN_POSITIVE;
        } else {
          const bounds = gainBounds(graph, mecs.states[i], mecs.choiceIn, reward, sigma, local, budget);
          lower[i] = bounds.lower;
          upper[i] = bounds.upper;
          if (bounds.lower > 0) {
            sign[i] = GAIN_POSITIVE;
            const members = mecs.states[i];
            // The greedy policy at the last vector satisfies T_pi v >= v + lower, so its mean is at least lower > 0.
            for (let j = 0; j < members.length; j++) positivePolicy[members[j]] = bounds.greedy[j];
          } else if (bounds.upper < 0) {
            sign[i] = GAIN_NEGATIVE;
          } else {
            sign[i] = GAIN_UNDECIDED;
          }
        }
    }
  }
  for (let j = 0; j < mixed.sub.count; j++) {
    const parent = mixed.parent[j];
    if (positiveSub[parent]) markPositiveRegion(mixed.sub.states[j], mixed.sub.choices[j]);
  }

  // Inside each structurally positive region, move towards a positive choice; then, inside the
  // whole MEC, move towards the region. Every recurrent class of the resulting policy contains a
  // positive choice and only non-negative ones, so its mean reward is positive.
  const inRegion = backwardLayering(graph, positiveSeed, { domain: positiveDomain, allowed: positiveChoice });
  const regionSeeds = new Uint8Array(n);
  const mecDomain = new Uint8Array(n);
  for (let s = 0; s < n; s++) {
    if (positiveDomain[s]) {
      regionSeeds[s] = 1;
      if (positivePolicy[s] < 0 || !positiveSeed[s]) positivePolicy[s] = inRegion.via[s];
    }
  }
  const mecChoice = new Uint8Array(model.choiceCount);
  for (let i = 0; i < count; i++) {
    if (sign[i] !== GAIN_POSITIVE || pattern[i] === 1 || lower[i] > 0) continue;
    for (const s of mecs.states[i]) mecDomain[s] = 1;
    for (const c of mecs.choices[i]) mecChoice[c] = 1;
  }
  const toRegion = backwardLayering(graph, regionSeeds, { domain: mecDomain, allowed: mecChoice });
  for (let s = 0; s < n; s++) if (mecDomain[s] && !positiveDomain[s]) positivePolicy[s] = toRegion.via[s];
  return { sign, lower, upper, positivePolicy };
}

/** Sub-end-components of the MECs whose pattern matches, using only the choices that pass `keep`. */
function subComponents(
  graph: ModelGraph,
  mecs: EndComponentDecomposition,
  pattern: Uint8Array,
  wanted: number,
  keep: (c: number) => boolean,
): { sub: EndComponentDecomposition; parent: Int32Array } {
  const stateMask = new Uint8Array(graph.model.stateCount);
  const choiceMask = new Uint8Array(graph.model.choiceCount);
  for (let i = 0; i < mecs.count; i++) {
    if (pattern[i] !== wanted) continue;
    for (const s of mecs.states[i]) stateMask[s] = 1;
    for (const c of mecs.choices[i]) if (keep(c)) choiceMask[c] = 1;
  }
  const sub = maximalEndComponents(graph, stateMask, choiceMask);
  const parent = new Int32Array(sub.count);
  for (let j = 0; j < sub.count; j++) parent[j] = mecs.componentOf[sub.states[j][0]];
  return { sub, parent };
}

export interface GainBounds {
  lower: number;
  upper: number;
  /** The greedy choice of each member (in member order) at the last vector. */
  greedy: Int32Array;
  /** The last vector (member order): a relative value (bias) estimate when the best mean is 0. */
  relative: Float64Array;
}

/**
 * Odoni's bounds on the best mean of sigma * reward inside a closed set of states, using the
 * allowed choices (which must keep every outcome inside the set). Stops as soon as the bounds
 * exclude 0, when they have closed to within 1e-12 of the reward scale, or when `budget` outcome
 * visits are spent. `local` is scratch space of length stateCount filled with -1 (restored).
 */
export function gainBounds(
  graph: ModelGraph,
  members: Int32Array,
  allowed: Uint8Array | undefined,
  reward: Float64Array,
  sigma: number,
  local: Int32Array,
  budget: number,
  average = false,
): GainBounds {
  const { choiceStart, outcomeStart, outcomeTarget, outcomeProb } = graph.model;
  const m = members.length;
  for (let i = 0; i < m; i++) local[members[i]] = i;
  let edges = 0;
  let scale = 0;
  for (let i = 0; i < m; i++) {
    const s = members[i];
    for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) {
      if (allowed && !allowed[c]) continue;
      edges += outcomeStart[c + 1] - outcomeStart[c];
      scale = Math.max(scale, Math.abs(reward[c]));
    }
  }
  const v = new Float64Array(m);
  const next = new Float64Array(m);
  const greedy = new Int32Array(m).fill(-1);
  const tau = 0.5;
  let lower = -Infinity;
  let upper = Infinity;
  let iterations = 0;
  for (let spent = 0; spent <= budget; spent += edges + 1) {
    let lo = Infinity;
    let hi = -Infinity;
    for (let i = 0; i < m; i++) {
      const s = members[i];
      let best = average ? 0 : -Infinity;
      let used = 0;
      for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) {
        if (allowed && !allowed[c]) continue;
        let acc = sigma * reward[c];
        for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) acc += outcomeProb[k] * v[local[outcomeTarget[k]]];
        if (average) {
          best += acc;
          used++;
        } else if (acc > best) {
          best = acc;
          greedy[i] = c;
        }
      }
      if (average && used > 0) best /= used;
      next[i] = best;
      const delta = best - v[i];
      if (delta < lo) lo = delta;
      if (delta > hi) hi = delta;
    }
    if (!Number.isFinite(lo) || !Number.isFinite(hi)) break;
    lower = Math.max(lower, lo);
    upper = Math.min(upper, hi);
    if (lower > 0 || upper < 0 || upper - lower <= 1e-12 * Math.max(1, scale) || ++iterations >= MAX_GAIN_ITERATIONS)
      break;
    const anchor = v[0] + tau * (next[0] - v[0]);
    for (let i = 0; i < m; i++) v[i] = v[i] + tau * (next[i] - v[i]) - anchor;
  }
  for (let i = 0; i < m; i++) local[members[i]] = -1;
  return { lower, upper, greedy, relative: v };
}
