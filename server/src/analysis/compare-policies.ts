/**
 * Comparing the optimal policies of two rewards on the same MDP: with and without shaping. Potential-
 * based shaping with Phi = 0 on terminals leaves the optimal actions unchanged (Ng, Harada and Russell,
 * 1999, Theorem 1); a potential on a terminal (Grzes, 2017) or shaping that is not potential-based can
 * change them, and so can truncation by a horizon, where the last potential is never paid back.
 */
import type { CompiledModel } from '../model/compiled';
import { analyzeModel } from './index';
import { policyChain, withReward } from './model-variants';
import { liveStartStates, pushSuccessors } from './paths';
import type { Analysis, FiniteHorizonSolution, Interval } from './types';
import { qValue } from './time-dependence';

export interface PolicyDifference {
  state: number;
  /** Steps left where the difference shows (the horizon's first step, or a later one); undefined without a horizon. */
  stepsLeft?: number;
  /** A best choice with shaping that is clearly not best without it, or the reverse. */
  shapedChoice: number;
  plainChoice: number;
  /** Bounds on Q of both choices under the reward without shaping (a point with a horizon). */
  plainQ: { shaped: Interval; plain: Interval };
}

export interface ShapingComparison {
  plain: Analysis;
  differences: PolicyDifference[];
  /** How many reachable states differ in total. */
  differingStates: number;
  /** Bounds on the unshaped return from the start of the shaped optimum, and on the best unshaped return. */
  shapedPolicyPlainReturn?: Interval;
  plainOptimalReturn?: Interval;
}

const plainAnalyses = new WeakMap<Analysis, Analysis>();

/** The analysis of the same MDP with `plainReward`, computed once per shaped analysis. */
export function plainAnalysisOf(
  model: CompiledModel,
  shaped: Analysis,
  plainReward: Float64Array,
  precision: number,
): Analysis {
  let plain = plainAnalyses.get(shaped);
  if (!plain) {
    plain = analyzeModel(withReward(model, plainReward), { precision });
    plainAnalyses.set(shaped, plain);
  }
  return plain;
}

export function compareShapedPolicies(
  model: CompiledModel,
  shaped: Analysis,
  plainReward: Float64Array,
  precision: number,
  maxDifferences = 10,
): ShapingComparison {
  const plain = plainAnalysisOf(model, shaped, plainReward, precision);
  const plainModel = plain.model;
  const result: ShapingComparison = { plain, differences: [], differingStates: 0 };
  if (shaped.horizon && plain.horizon) {
    compareFiniteHorizon(
      model,
      plainModel,
      shaped.horizon,
      plain.horizon,
      shaped.reachable,
      precision,
      maxDifferences,
      result,
    );
    result.plainOptimalReturn = point(startValue(plainModel, plain.horizon, plain.horizon.horizon));
    result.shapedPolicyPlainReturn = point(evaluateFiniteHorizon(plainModel, shaped.horizon));
    return result;
  }
  for (let s = 0; s < model.stateCount; s++) {
    if (!shaped.reachable[s] || model.terminal[s] !== 0) continue;
    const difference = stationaryDifference(model, shaped, plain, s, precision);
    if (!difference) continue;
    result.differingStates++;
    if (result.differences.length < maxDifferences) result.differences.push(difference);
  }
  if (result.differingStates > 0 && shaped.optimal.policy) {
    const chain = policyChain(plainModel, shaped.optimal.policy);
    const evaluation = analyzeModel(chain.model, { precision });
    result.shapedPolicyPlainReturn = evaluation.start.optimal;
    result.plainOptimalReturn = plain.start.optimal;
  }
  return result;
}

function point(x: number): Interval {
  return { lower: x, upper: x };
}

/**
 * A state differs when some action is best under one reward while, under the other, it is not best and
 * its Q bounds lie below the best action's by more than the precision (above, when minimizing): a
 * difference the bounds prove, never a near-tie. States whose value is undefined under either reward
 * are not compared.
 */
function stationaryDifference(
  model: CompiledModel,
  shaped: Analysis,
  plain: Analysis,
  s: number,
  precision: number,
): PolicyDifference | undefined {
  // Where either value is undefined (bounds -inf to inf), neither reward says which action is best.
  for (const analysis of [shaped, plain]) {
    const { lower, upper } = analysis.optimal.values;
    if (!(lower[s] > -Infinity || upper[s] < Infinity)) return undefined;
  }
  const first = model.choiceStart[s];
  const last = model.choiceStart[s + 1];
  const clearlyWorse = (analysis: Analysis, c: number): boolean => {
    if (analysis.isBest[c]) return false;
    const { lower, upper } = analysis.q;
    if (model.maximize) {
      let bestLower = -Infinity;
      for (let d = first; d < last; d++) bestLower = Math.max(bestLower, lower[d]);
      return Number.isFinite(bestLower) && upper[c] < bestLower - precision * Math.max(1, Math.abs(bestLower));
    }
    let bestUpper = Infinity;
    for (let d = first; d < last; d++) bestUpper = Math.min(bestUpper, upper[d]);
    return Number.isFinite(bestUpper) && lower[c] > bestUpper + precision * Math.max(1, Math.abs(bestUpper));
  };
  const bestOf = (analysis: Analysis): number => {
    for (let c = first; c < last; c++) if (analysis.isBest[c]) return c;
    return first;
  };
  for (let c = first; c < last; c++) {
    const shapedOnly = shaped.isBest[c] && clearlyWorse(plain, c);
    const plainOnly = plain.isBest[c] && clearlyWorse(shaped, c);
    if (!shapedOnly && !plainOnly) continue;
    const shapedChoice = shapedOnly ? c : bestOf(shaped);
    const plainChoice = plainOnly ? c : bestOf(plain);
    return {
      state: s,
      shapedChoice,
      plainChoice,
      plainQ: {
        shaped: { lower: plain.q.lower[shapedChoice], upper: plain.q.upper[shapedChoice] },
        plain: { lower: plain.q.lower[plainChoice], upper: plain.q.upper[plainChoice] },
      },
    };
  }
  return undefined;
}

/**
 * With a horizon: walks forward in time over the states some policy can be in after t steps and
 * compares the best actions with H - t steps left under both rewards.
 */
function compareFiniteHorizon(
  shapedModel: CompiledModel,
  plainModel: CompiledModel,
  shaped: FiniteHorizonSolution,
  plain: FiniteHorizonSolution,
  reachable: Uint8Array,
  precision: number,
  maxDifferences: number,
  result: ShapingComparison,
): void {
  const n = shapedModel.stateCount;
  const sign = shapedModel.maximize ? 1 : -1;
  const scale = (solution: FiniteHorizonSolution) => {
    let most = 1;
    for (const v of solution.value) if (Number.isFinite(v)) most = Math.max(most, Math.abs(v));
    return most;
  };
  const shapedTolerance = precision * scale(shaped);
  const plainTolerance = precision * scale(plain);
  const differing = new Uint8Array(n);
  let current = liveStartStates(shapedModel);
  const queued = new Int32Array(n).fill(-1);
  for (let t = 0; t < shaped.horizon && current.length > 0; t++) {
    const k = shaped.horizon - t;
    const next: number[] = [];
    for (const s of current) {
      if (!reachable[s]) continue;
      const first = shapedModel.choiceStart[s];
      const last = shapedModel.choiceStart[s + 1];
      let bestShaped = -Infinity;
      let bestPlain = -Infinity;
      for (let c = first; c < last; c++) {
        bestShaped = Math.max(bestShaped, sign * qValue(shapedModel, shaped, c, k));
        bestPlain = Math.max(bestPlain, sign * qValue(plainModel, plain, c, k));
        pushSuccessors(shapedModel, c, t + 1, queued, next);
      }
      if (differing[s]) continue;
      let shapedChoice = -1;
      let plainChoice = -1;
      for (let c = first; c < last; c++) {
        const qs = sign * qValue(shapedModel, shaped, c, k);
        const qp = sign * qValue(plainModel, plain, c, k);
        const isShapedBest = qs >= bestShaped - shapedTolerance;
        const isPlainBest = qp >= bestPlain - plainTolerance;
        if (isShapedBest && qp < bestPlain - plainTolerance) shapedChoice = c;
        if (isPlainBest && qs < bestShaped - shapedTolerance) plainChoice = c;
      }
      if (shapedChoice < 0 && plainChoice < 0) continue;
      differing[s] = 1;
      result.differingStates++;
      if (result.differences.length >= maxDifferences) continue;
      const pick = (isBest: (c: number) => boolean) => {
        for (let c = first; c < last; c++) if (isBest(c)) return c;
        return first;
      };
      if (shapedChoice < 0)
        shapedChoice = pick((c) => sign * qValue(shapedModel, shaped, c, k) >= bestShaped - shapedTolerance);
      if (plainChoice < 0)
        plainChoice = pick((c) => sign * qValue(plainModel, plain, c, k) >= bestPlain - plainTolerance);
      result.differences.push({
        state: s,
        stepsLeft: k,
        shapedChoice,
        plainChoice,
        plainQ: {
          shaped: point(qValue(plainModel, plain, shapedChoice, k)),
          plain: point(qValue(plainModel, plain, plainChoice, k)),
        },
      });
    }
    current = next;
  }
}

/** The optimal value from the start distribution with k steps left. */
function startValue(model: CompiledModel, solution: FiniteHorizonSolution, k: number): number {
  let total = 0;
  for (let i = 0; i < model.startState.length; i++) {
    const s = model.startState[i];
    total += model.startProb[i] * (model.terminal[s] !== 0 ? 0 : solution.value[k * model.stateCount + s]);
  }
  return total;
}

/**
 * The plain model's return from the start when following the shaped solution's best choice at each
 * (steps left, state): backward evaluation of that time-dependent policy.
 */
function evaluateFiniteHorizon(plainModel: CompiledModel, shaped: FiniteHorizonSolution): number {
  const n = plainModel.stateCount;
  let later = new Float64Array(n);
  for (let k = 1; k <= shaped.horizon; k++) {
    const now = new Float64Array(n);
    for (let s = 0; s < n; s++) {
      const c = shaped.bestChoice[k * n + s];
      if (plainModel.terminal[s] !== 0 || c < 0) continue;
      let total = 0;
      for (let o = plainModel.outcomeStart[c]; o < plainModel.outcomeStart[c + 1]; o++) {
        const t = plainModel.outcomeTarget[o];
        total +=
          plainModel.outcomeProb[o] *
          (plainModel.outcomeReward[o] + plainModel.discount * (plainModel.terminal[t] !== 0 ? 0 : later[t]));
      }
      now[s] = total;
    }
    later = now;
  }
  let total = 0;
  for (let i = 0; i < plainModel.startState.length; i++)
    total += plainModel.startProb[i] * later[plainModel.startState[i]];
  return total;
}
