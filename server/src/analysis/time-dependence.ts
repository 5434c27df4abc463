/**
 * Whether the finite-horizon optimum needs to see the time. With a horizon the optimal policy is in
 * general non-stationary (Pardo, Tavakoli, Levdik and Kormushev, 2018, "Time limits in reinforcement
 * learning"): the best action at a state may depend on the steps left. A policy that does not see time
 * can act optimally only if, at every state the optimal behaviour visits, some action is best for every
 * number of steps left at which the state is visited. A learner that explores also meets the states
 * off the optimal path, where a best action that changes with time confuses its value estimates too.
 *
 * This walks forward in time from the start over the states that some policy can be in after t steps,
 * keeps per state the set of actions that were best at every visit so far, and reports the states
 * where that set becomes empty. timeBlindLoss measures what ignoring time costs from the start.
 */
import type { CompiledModel } from '../model/compiled';
import { liveStartStates, pushSuccessors } from './paths';
import type { FiniteHorizonSolution } from './types';

export interface TimeFlip {
  state: number;
  /**
   * Steps left at the visit where no action stays best, and at the latest earlier visit where the
   * best action now was not best (an earlier visit where both tie shows no difference).
   */
  stepsLeft: number;
  earlierStepsLeft: number;
  /** The earliest steps-left value at which the state was visited (the start of the agreeing range). */
  firstStepsLeft: number;
  /** An action best at every earlier visit, and the best action now. */
  earlierChoice: number;
  bestChoice: number;
  /** Q of both choices with `stepsLeft` steps left, and with `earlierStepsLeft` steps left. */
  qNow: { earlier: number; best: number };
  qEarlier: { earlier: number; best: number };
  /** A path (state, choice) that some policy takes from the start to the state at the flip. */
  path: Array<{ state: number; choice: number; outcome: number }>;
}

/** At most this many (time, state) visits are kept for drawing paths (80 MB of Int32). */
const LAYER_BUDGET = 20_000_000;

export interface TimeDependence {
  flips: TimeFlip[];
  /** How many states need time to be acted on optimally. */
  flippedStates: number;
}

/**
 * Finds the states where the best action changes with the steps left. `tieTolerance` is relative to
 * the largest value magnitude (at least 1): Q values closer than that count as equally good.
 */
export function findTimeFlips(
  model: CompiledModel,
  solution: FiniteHorizonSolution,
  tieTolerance: number,
  maxFlips = 20,
): TimeDependence {
  const n = model.stateCount;
  const horizon = solution.horizon;
  let scale = 1;
  for (let i = 0; i < solution.value.length; i++) {
    const v = Math.abs(solution.value[i]);
    if (v > scale && Number.isFinite(v)) scale = v;
  }
  const tolerance = tieTolerance * scale;
  const q = new Float64Array(maxChoices(model));
  const stillBest = new Uint8Array(model.choiceCount);
  // Per choice, the steps left at the latest visit of its state where it was not best.
  const lastNotBest = new Int32Array(model.choiceCount).fill(-1);
  const seenAt = new Int32Array(n).fill(-1);
  const firstSeen = new Int32Array(n).fill(-1);
  const flipped = new Uint8Array(n);
  const layers: Int32Array[] = [];
  let stored = 0;
  let current = liveStartStates(model);
  const queued = new Int32Array(n).fill(-1);
  const flips: TimeFlip[] = [];
  let flippedStates = 0;
  for (let t = 0; t < horizon && current.length > 0; t++) {
    const k = horizon - t;
    const next: number[] = [];
    current.sort((a, b) => a - b);
    for (const s of current) {
      const first = model.choiceStart[s];
      const count = model.choiceStart[s + 1] - first;
      let best = -Infinity;
      for (let i = 0; i < count; i++) {
        q[i] = (model.maximize ? 1 : -1) * qValue(model, solution, first + i, k);
        if (q[i] > best) best = q[i];
      }
      const revisit = seenAt[s] >= 0;
      let agreeing = 0;
      for (let i = 0; i < count; i++) {
        const isBest = q[i] >= best - tolerance;
        // Some policy takes every action, so every one of them carries the visit on.
        pushSuccessors(model, first + i, t + 1, queued, next);
        if (isBest && (!revisit || stillBest[first + i])) agreeing++;
      }
      if (revisit && agreeing === 0 && !flipped[s]) {
        flipped[s] = 1;
        flippedStates++;
        if (flips.length < maxFlips) {
          // stillBest and lastNotBest still describe the earlier visits only.
          const flip = describeFlip(model, solution, s, k, firstSeen[s], stillBest, lastNotBest, tolerance, layers, t);
          if (flip) flips.push(flip);
        }
      }
      for (let i = 0; i < count; i++) {
        const isBest = q[i] >= best - tolerance;
        stillBest[first + i] = isBest && (!revisit || stillBest[first + i]) ? 1 : 0;
        if (!isBest) lastNotBest[first + i] = k;
      }
      if (firstSeen[s] < 0) firstSeen[s] = k;
      seenAt[s] = k;
    }
    // The layers serve only to show a path to a flip; beyond a budget they are dropped to bound memory.
    stored += current.length;
    layers.push(stored <= LAYER_BUDGET ? Int32Array.from(current) : new Int32Array(0));
    current = next;
  }
  return { flips, flippedStates };
}

function maxChoices(model: CompiledModel): number {
  let most = 1;
  for (let s = 0; s < model.stateCount; s++) most = Math.max(most, model.choiceStart[s + 1] - model.choiceStart[s]);
  return most;
}

/** Q of a choice with k steps left: expected reward plus the discounted value with k - 1 steps left. */
export function qValue(model: CompiledModel, solution: FiniteHorizonSolution, choice: number, k: number): number {
  const n = model.stateCount;
  let total = 0;
  for (let o = model.outcomeStart[choice]; o < model.outcomeStart[choice + 1]; o++) {
    const target = model.outcomeTarget[o];
    const later = model.terminal[target] !== 0 ? 0 : solution.value[(k - 1) * n + target];
    total += model.outcomeProb[o] * (model.outcomeReward[o] + model.discount * later);
  }
  return total;
}

function bestOf(
  model: CompiledModel,
  solution: FiniteHorizonSolution,
  state: number,
  k: number,
  among?: (c: number) => boolean,
): number {
  let best = -1;
  let bestValue = -Infinity;
  for (let c = model.choiceStart[state]; c < model.choiceStart[state + 1]; c++) {
    if (among && !among(c)) continue;
    const value = (model.maximize ? 1 : -1) * qValue(model, solution, c, k);
    if (value > bestValue) {
      bestValue = value;
      best = c;
    }
  }
  return best;
}

function describeFlip(
  model: CompiledModel,
  solution: FiniteHorizonSolution,
  state: number,
  k: number,
  firstK: number,
  stillBest: Uint8Array,
  lastNotBest: Int32Array,
  tolerance: number,
  layers: Int32Array[],
  t: number,
): TimeFlip | undefined {
  // The action best at every earlier visit that loses least now stands for "what a time-blind policy
  // would have kept doing". Picking among the actions best at the latest visit alone could pick the
  // best action now, when the two tied there.
  const bestNow = bestOf(model, solution, state, k);
  const earlierChoice = bestOf(model, solution, state, k, (c) => stillBest[c] === 1);
  // The two differ where the best action now was last not best; an earlier visit that ended in a
  // tie between them would show no difference.
  const earlierK = bestNow < 0 ? -1 : lastNotBest[bestNow];
  if (earlierChoice < 0 || earlierK < 0) return undefined;
  return {
    state,
    stepsLeft: k,
    earlierStepsLeft: earlierK,
    firstStepsLeft: firstK,
    earlierChoice,
    bestChoice: bestNow,
    qNow: { earlier: qValue(model, solution, earlierChoice, k), best: qValue(model, solution, bestNow, k) },
    qEarlier: {
      earlier: qValue(model, solution, earlierChoice, earlierK),
      best: qValue(model, solution, bestNow, earlierK),
    },
    path: pathBack(model, solution, state, t, layers, tolerance),
  };
}

/** Walks the stored layers back from (t, state) to the start, along best choices where they lead there. */
function pathBack(
  model: CompiledModel,
  solution: FiniteHorizonSolution,
  state: number,
  t: number,
  layers: Int32Array[],
  tolerance: number,
): Array<{ state: number; choice: number; outcome: number }> {
  const horizon = solution.horizon;
  const path: Array<{ state: number; choice: number; outcome: number }> = [{ state, choice: -1, outcome: -1 }];
  let target = state;
  for (let time = t - 1; time >= 0; time--) {
    const k = horizon - time;
    let found = false;
    // First along best choices (optimal behaviour), else along any: the state may lie off the optimal path.
    for (const onlyBest of [true, false]) {
      for (const s of layers[time]) {
        const best = (model.maximize ? 1 : -1) * qValue(model, solution, bestOf(model, solution, s, k), k);
        for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1] && !found; c++) {
          if (onlyBest && (model.maximize ? 1 : -1) * qValue(model, solution, c, k) < best - tolerance) continue;
          for (let o = model.outcomeStart[c]; o < model.outcomeStart[c + 1]; o++) {
            if (model.outcomeTarget[o] === target && model.outcomeProb[o] > 0) {
              path.push({ state: s, choice: c, outcome: o });
              target = s;
              found = true;
              break;
            }
          }
        }
        if (found) break;
      }
      if (found) break;
    }
    if (!found) break;
  }
  return path.reverse();
}

export interface TimeBlindLoss {
  /** The optimal (time-dependent) return from the start. */
  optimal: number;
  /** The best return from the start of the deterministic time-blind (stationary) policies tried. */
  timeBlind: number;
  /** True when every deterministic stationary policy was tried: timeBlind is then their best. */
  exact: boolean;
  /** How many stationary policies were evaluated. */
  tried: number;
}

/** Deterministic stationary policies are all enumerated up to this many. */
const ENUMERATION_LIMIT = 4096;
/** Outcome visits spent evaluating stationary policies at most. */
const EVALUATION_BUDGET = 5e7;
/** Without enumeration, at most this many "best action with k steps left" policies are tried. */
const CANDIDATE_LIMIT = 32;

/**
 * What a policy that does not see time gives up from the start: the optimal return against the best
 * deterministic stationary policy, evaluated over the horizon by backward induction. Small models
 * try every such policy (exact over deterministic ones); larger ones try, for several k, the
 * stationary policy that always takes the best action with k steps left, which bounds the loss from
 * above. Randomised time-blind policies can do better than deterministic ones (S. Singh, T. Jaakkola
 * and M. Jordan, "Learning without state-estimation in partially observable Markovian decision
 * processes", ICML 1994), so this is the loss of deterministic time-blind policies.
 */
export function timeBlindLoss(model: CompiledModel, solution: FiniteHorizonSolution): TimeBlindLoss {
  const n = model.stateCount;
  const horizon = solution.horizon;
  const sigma = model.maximize ? 1 : -1;
  const optimal = startReturn(model, solution.value.subarray(horizon * n, (horizon + 1) * n));
  // The states some policy can be in before the horizon ends decide the return.
  const seen = new Uint8Array(n);
  let current = liveStartStates(model);
  const queued = new Int32Array(n).fill(-1);
  for (let t = 0; t < horizon && current.length > 0; t++) {
    const next: number[] = [];
    for (const s of current) {
      seen[s] = 1;
      for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++)
        pushSuccessors(model, c, t + 1, queued, next);
    }
    current = next;
  }
  const deciding: number[] = [];
  let combinations = 1;
  for (let s = 0; s < n; s++) {
    const count = model.choiceStart[s + 1] - model.choiceStart[s];
    if (!seen[s] || model.terminal[s] !== 0 || count < 2) continue;
    deciding.push(s);
    combinations = Math.min(combinations * count, ENUMERATION_LIMIT + 1);
  }
  const cost = Math.max(1, horizon * (model.outcomeCount + n));
  const policy = new Int32Array(n);
  for (let s = 0; s < n; s++) policy[s] = model.choiceStart[s + 1] > model.choiceStart[s] ? model.choiceStart[s] : -1;
  let timeBlind = -Infinity;
  let tried = 0;
  const consider = () => {
    timeBlind = Math.max(timeBlind, sigma * evaluateStationary(model, policy, horizon));
    tried++;
  };
  if (combinations <= ENUMERATION_LIMIT && combinations * cost <= EVALUATION_BUDGET) {
    // Odometer over the deciding states' choices.
    for (;;) {
      consider();
      let i = 0;
      for (; i < deciding.length; i++) {
        const s = deciding[i];
        if (++policy[s] < model.choiceStart[s + 1]) break;
        policy[s] = model.choiceStart[s];
      }
      if (i === deciding.length) break;
    }
    return { optimal, timeBlind: sigma * timeBlind, exact: true, tried };
  }
  const count = Math.max(1, Math.min(horizon, CANDIDATE_LIMIT, Math.floor(EVALUATION_BUDGET / cost)));
  for (let j = 0; j < count; j++) {
    const k = count === 1 ? horizon : 1 + Math.round((j * (horizon - 1)) / (count - 1));
    for (const s of deciding)
      policy[s] = solution.bestChoice[k * n + s] >= 0 ? solution.bestChoice[k * n + s] : model.choiceStart[s];
    consider();
  }
  return { optimal, timeBlind: sigma * timeBlind, exact: false, tried };
}

/** The return from the start of a stationary policy over `horizon` steps (terminals worth 0). */
function evaluateStationary(model: CompiledModel, policy: Int32Array, horizon: number): number {
  const n = model.stateCount;
  let later = new Float64Array(n);
  let now = new Float64Array(n);
  for (let k = 1; k <= horizon; k++) {
    for (let s = 0; s < n; s++) {
      const c = policy[s];
      if (c < 0 || model.terminal[s] !== 0) {
        now[s] = 0;
        continue;
      }
      let total = 0;
      for (let o = model.outcomeStart[c]; o < model.outcomeStart[c + 1]; o++) {
        const t = model.outcomeTarget[o];
        total +=
          model.outcomeProb[o] * (model.outcomeReward[o] + model.discount * (model.terminal[t] !== 0 ? 0 : later[t]));
      }
      now[s] = total;
    }
    const swap = later;
    later = now;
    now = swap;
  }
  return startReturn(model, later);
}

function startReturn(model: CompiledModel, values: ArrayLike<number>): number {
  let total = 0;
  for (let i = 0; i < model.startState.length; i++) {
    const s = model.startState[i];
    if (model.startProb[i] > 0 && model.terminal[s] === 0) total += model.startProb[i] * values[s];
  }
  return total;
}
