/**
 * Finite-horizon values by backward induction over time-to-go (M. Puterman, Markov Decision
 * Processes, 1994, section 4.5): V_0 = 0 and V_k(s) = best over choices of
 * r(c) + discount * sum p V_{k-1}(t), with terminals worth 0. The optimal, worst and random
 * policies' values, their reach probabilities and episode lengths, the best goal probability and
 * the optimal policy's reward-term totals are all advanced in the same pass, so the (time-
 * dependent) best choices never need to be stored for them.
 *
 * Values are exact up to floating-point rounding. When the horizon is so long that the sweeps
 * would exceed the work budget, induction stops after K steps and the remaining H - K steps are
 * bounded by their largest and smallest possible rewards (sound, then no longer exact).
 */
import { TERMINAL_CODE } from '../model/compiled';
import type { ModelGraph } from './graph';
import type { FiniteHorizonSolution } from './types';

/** Choices within this relative distance of the best Q are ties (floating-point noise). */
const TIE_TOLERANCE = 1e-10;
/** Time-dependent tables are kept only up to this many (steps+1) x states entries. */
const TABLE_LIMIT = 1 << 24;

/** A quantity advanced under one policy: base(c) + factor * sum p prev(t). */
interface Track {
  base: Float64Array;
  factor: number;
  /** 0: the optimal policy, 1: the worst one, 2: the uniformly random one, 3: the best goal probability. */
  policy: 0 | 1 | 2 | 3;
  prev: Float64Array;
  cur: Float64Array;
}

export interface HorizonInputs {
  reward: Float64Array;
  /** Per terminal kind present (goal, failure, neutral order, undefined where absent): entry probability per choice. */
  entry: (Float64Array | undefined)[];
  /** Per reward term of the term shares: its expected value per choice. */
  terms: Float64Array[];
  /** Whether the best (optimal) choice maximises. */
  maximize: boolean;
  /** Outcome visits allowed before the induction is cut short. */
  budget: number;
}

export interface HorizonPolicyResult {
  /** Values with the horizon's steps left (before any tail offsets). */
  values: Float64Array;
  /** Per terminal kind (goal, failure, neutral; undefined where absent): probability of ending there. */
  reach: (Float64Array | undefined)[];
  length: Float64Array;
  /** The first-step choice (steps left = horizon); absent for the random policy. */
  policy?: Int32Array;
}

export interface HorizonResult {
  optimal: HorizonPolicyResult;
  worst: HorizonPolicyResult;
  random: HorizonPolicyResult;
  q: Float64Array;
  isBest: Uint8Array;
  maxGoalReach: Float64Array;
  terms: Float64Array[];
  table?: FiniteHorizonSolution;
  /** Steps actually induced (= horizon unless cut short). */
  steps: number;
  /** When cut short: sound offsets to add to the optimal/worst/random values (lower, upper); zero otherwise. */
  tailLower: number;
  tailUpper: number;
}

export function solveFiniteHorizon(graph: ModelGraph, horizon: number, inputs: HorizonInputs): HorizonResult {
  const model = graph.model;
  const n = model.stateCount;
  const { choiceStart, outcomeStart, outcomeTarget, outcomeProb } = model;
  const { absorbing } = graph;
  const discount = model.discount;
  const sigma = inputs.maximize ? 1 : -1;

  // Each step visits every outcome and state once per tracked quantity, plus a fixed overhead.
  const tracked = 6 + 4 * inputs.entry.length + inputs.terms.length;
  const work = (model.outcomeCount + n + 64) * tracked;
  const steps = Math.min(horizon, Math.max(100, Math.floor(inputs.budget / Math.max(1, work))));
  const keepTable = (horizon + 1) * n <= TABLE_LIMIT && steps === horizon;
  const table: FiniteHorizonSolution | undefined = keepTable
    ? { horizon, value: new Float64Array((horizon + 1) * n), bestChoice: new Int32Array((horizon + 1) * n).fill(-1) }
    : undefined;

  const make = (base: Float64Array, factor: number, policy: Track['policy']): Track => ({
    base,
    factor,
    policy,
    prev: new Float64Array(n),
    cur: new Float64Array(n),
  });
  const optimalValue = make(inputs.reward, discount, 0);
  const worstValue = make(inputs.reward, discount, 1);
  const randomValue = make(inputs.reward, discount, 2);
  const ones = new Float64Array(model.choiceCount).fill(1);
  const tracks: Track[] = [randomValue];
  const reachTracks = [0, 1, 2].map((p) => inputs.entry.map((e) => (e ? make(e, 1, p as 0 | 1 | 2) : undefined)));
  const lengthTracks = [0, 1, 2].map((p) => make(ones, 1, p as 0 | 1 | 2));
  const termTracks = inputs.terms.map((t) => make(t, discount, 0));
  const goalEntry = inputs.entry[0];
  const maxGoal = goalEntry ? make(goalEntry, 1, 3) : undefined;
  for (const list of reachTracks) for (const t of list) if (t) tracks.push(t);
  tracks.push(...lengthTracks, ...termTracks);
  if (maxGoal) tracks.push(maxGoal);

  const q = new Float64Array(model.choiceCount);
  const isBest = new Uint8Array(model.choiceCount);
  const firstOptimal = new Int32Array(n).fill(-1);
  const firstWorst = new Int32Array(n).fill(-1);
  const expect = (c: number, vec: Float64Array): number => {
    let acc = 0;
    for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) acc += outcomeProb[k] * vec[outcomeTarget[k]];
    return acc;
  };

  let k = 0;
  for (k = 1; k <= steps; k++) {
    let changed = false;
    for (let s = 0; s < n; s++) {
      if (absorbing[s]) continue;
      const c0 = choiceStart[s];
      const c1 = choiceStart[s + 1];
      // Best and worst choices from the previous values, ties to the lowest index.
      let bestQ = -Infinity;
      let worstQ = -Infinity;
      for (let c = c0; c < c1; c++) {
        const qo = sigma * (inputs.reward[c] + discount * expect(c, optimalValue.prev));
        const qw = -sigma * (inputs.reward[c] + discount * expect(c, worstValue.prev));
        if (k === steps) q[c] = sigma * qo;
        if (qo > bestQ) bestQ = qo;
        if (qw > worstQ) worstQ = qw;
      }
      let bestChoice = -1;
      let worstChoice = -1;
      const bestTol = TIE_TOLERANCE * Math.max(1, Math.abs(bestQ));
      const worstTol = TIE_TOLERANCE * Math.max(1, Math.abs(worstQ));
      for (let c = c0; c < c1; c++) {
        const qo = sigma * (inputs.reward[c] + discount * expect(c, optimalValue.prev));
        if (qo >= bestQ - bestTol) {
          if (bestChoice < 0) bestChoice = c;
          if (k === steps) isBest[c] = 1;
        }
        if (worstChoice < 0 && -sigma * (inputs.reward[c] + discount * expect(c, worstValue.prev)) >= worstQ - worstTol)
          worstChoice = c;
      }
      optimalValue.cur[s] = inputs.reward[bestChoice] + discount * expect(bestChoice, optimalValue.prev);
      worstValue.cur[s] = inputs.reward[worstChoice] + discount * expect(worstChoice, worstValue.prev);
      if (optimalValue.cur[s] !== optimalValue.prev[s] || worstValue.cur[s] !== worstValue.prev[s]) changed = true;
      if (k === steps) {
        firstOptimal[s] = bestChoice;
        firstWorst[s] = worstChoice;
      }
      if (table) table.bestChoice[k * n + s] = bestChoice;
      for (const t of tracks) {
        let value: number;
        if (t.policy === 0) value = t.base[bestChoice] + t.factor * expect(bestChoice, t.prev);
        else if (t.policy === 1) value = t.base[worstChoice] + t.factor * expect(worstChoice, t.prev);
        else if (t.policy === 2) {
          value = 0;
          for (let c = c0; c < c1; c++) value += t.base[c] + t.factor * expect(c, t.prev);
          value /= c1 - c0;
        } else {
          value = -Infinity;
          for (let c = c0; c < c1; c++) value = Math.max(value, t.base[c] + t.factor * expect(c, t.prev));
        }
        if (value !== t.prev[s]) changed = true;
        t.cur[s] = value;
      }
    }
    if (table) table.value.set(optimalValue.cur, k * n);
    for (const t of [optimalValue, worstValue, ...tracks]) {
      const swap = t.prev;
      t.prev = t.cur;
      t.cur = swap;
    }
    if (!changed && k < steps) {
      // A fixed point: every later step repeats this one exactly.
      if (table) {
        for (let j = k + 1; j <= horizon; j++) {
          table.value.set(optimalValue.prev, j * n);
          table.bestChoice.copyWithin(j * n, k * n, (k + 1) * n);
        }
      }
      // One more step fills q, isBest and the first-step choices.
      k = steps - 1;
    }
  }

  // The tail of a cut-short induction: what the remaining steps can add at most and least.
  let tailLower = 0;
  let tailUpper = 0;
  if (steps < horizon) {
    let rmin = 0;
    let rmax = 0;
    for (let c = 0; c < model.choiceCount; c++) {
      rmin = Math.min(rmin, inputs.reward[c]);
      rmax = Math.max(rmax, inputs.reward[c]);
    }
    const remaining = horizon - steps;
    const geometric =
      discount === 1 ? remaining : (Math.pow(discount, steps) * (1 - Math.pow(discount, remaining))) / (1 - discount);
    tailLower = rmin * geometric;
    tailUpper = rmax * geometric;
  }

  // A terminal has ended the episode in its own kind, as in the analysis without a horizon: the
  // induction kept it at 0 so that entering it is counted once, on the step into it.
  const kindCodes = [TERMINAL_CODE.goal, TERMINAL_CODE.failure, TERMINAL_CODE.neutral];
  for (let s = 0; s < n; s++) {
    const code = model.terminal[s];
    if (code === 0) continue;
    for (const list of reachTracks) {
      list.forEach((t, i) => {
        if (t && kindCodes[i] === code) t.prev[s] = 1;
      });
    }
    if (maxGoal && code === TERMINAL_CODE.goal) maxGoal.prev[s] = 1;
  }

  const result = (value: Track, policy: 0 | 1 | 2, first?: Int32Array): HorizonPolicyResult => ({
    values: value.prev,
    reach: reachTracks[policy].map((t) => t?.prev),
    length: lengthTracks[policy].prev,
    policy: first,
  });
  return {
    optimal: result(optimalValue, 0, firstOptimal),
    worst: result(worstValue, 1, firstWorst),
    random: result(randomValue, 2),
    q,
    isBest,
    maxGoalReach: maxGoal ? maxGoal.prev : new Float64Array(n),
    terms: termTracks.map((t) => t.prev),
    table,
    steps,
    tailLower,
    tailUpper,
  };
}
