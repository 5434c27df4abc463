/**
 * Sound value bounds by interval iteration: S. Haddad and B. Monmege, "Interval iteration
 * algorithm for MDPs and IMDPs", Theoretical Computer Science 735, 2018. A lower and an upper
 * vector are swept with the Bellman operator until they are close; each stays on its side of the
 * true value because the operator is monotone and the true value is its fixed point.
 *
 * Where no a-priori bound exists (total reward at discount 1), the missing side is found as in
 * optimistic value iteration (A. Hartmanns and B. L. Kaminski, "Optimistic value iteration",
 * CAV 2020): guess a vector near the estimate and accept it only after a sweep shows it is
 * inductive (G U <= U for an upper bound, G L >= L for a lower one, G the Gauss-Seidel operator).
 * Under the conditions the callers establish (discount < 1, or a stochastic shortest path whose
 * improper policies all lose infinitely, D. Bertsekas and J. Tsitsiklis, "An analysis of
 * stochastic shortest path problems", Math. Oper. Res. 16(3), 1991) value iteration converges
 * from any start, so an inductive upper vector stays above the fixed point. A plain "stop when the
 * change is small" test is never used as a stopping rule: it is unsound at discount 1.
 *
 * Bounds are widened at the end by a margin that covers the rounding of the floating-point sums.
 */
import type { CompiledModel } from '../model/compiled';
import { guessAt } from './warm-start';

/** How a node's value combines the values of its choices. */
export const COMBINE_MAX = 0;
export const COMBINE_MIN = 1;
export const COMBINE_AVERAGE = 2;
export const COMBINE_POLICY = 3;
export type Combine = typeof COMBINE_MAX | typeof COMBINE_MIN | typeof COMBINE_AVERAGE | typeof COMBINE_POLICY;

/** The Bellman operator of one value problem. */
/** What the sweeps read of a model: its CSR arrays (sweep-layout.ts hands them a renumbered copy). */
export type SweepModel = Pick<
  CompiledModel,
  'stateCount' | 'choiceStart' | 'outcomeStart' | 'outcomeTarget' | 'outcomeProb'
>;

export interface Operator {
  model: SweepModel;
  combine: Combine;
  /** For COMBINE_POLICY: the choice of each state. */
  policy?: Int32Array;
  /** Expected immediate reward per choice. */
  reward: Float64Array;
  discount: number;
  /** Choices that may be used (1); all when absent. */
  allowed?: Uint8Array;
}

/**
 * The states the sweeps update, grouped into nodes in sweep order. A node with several members is
 * a collapsed end component: its members share one value, the best of their allowed choices and,
 * when `stay` is set, 0 for staying inside forever.
 */
export interface Nodes {
  count: number;
  start: Int32Array;
  members: Int32Array;
  stay: Uint8Array;
}

/** Singleton nodes for the given states, in the given order. */
export function singletonNodes(states: Int32Array): Nodes {
  const start = new Int32Array(states.length + 1);
  for (let i = 0; i <= states.length; i++) start[i] = i;
  return { count: states.length, start, members: states, stay: new Uint8Array(states.length) };
}

/**
 * Widths are measured absolutely for values up to this magnitude and relatively beyond it:
 * width / (|value| / RELATIVE_FROM). Stricter than "relative above 1", so textbook values in the
 * tens are still bounded to the absolute precision.
 */
export const RELATIVE_FROM = 1000;

/** A bound pair's width as compared with the precision target. */
export function scaledWidth(lower: number, upper: number): number {
  const magnitude = Math.min(Math.abs(lower), Math.abs(upper));
  const width = upper - lower;
  return magnitude > RELATIVE_FROM ? (width * RELATIVE_FROM) / magnitude : width;
}

/**
 * The closed-form factor for a state's self-loop: with weight `used` on the state's own update and
 * `selfWeight` (discount times probability) of it returning to itself, the update
 * x = (rest + selfWeight * x) / used solves to x = rest / (used - selfWeight). Same fixed point,
 * still monotone, and u >= T(u) holds exactly when it holds for the closed form, so interval
 * iteration and its checks stay sound; Gauss-Seidel on a corridor of states that mostly stay put
 * then converges in a few sweeps instead of thousands. Returns 0 when the loop (almost) never
 * leaves: the plain update is used then.
 */
function selfLoopFactor(selfWeight: number, used: number): number {
  const denominator = used - selfWeight;
  return selfWeight > 0 && denominator > 1e-9 * used ? 1 / denominator : 0;
}

/** Statistics of one sweep. */
export interface SweepStats {
  /** Largest scaledWidth over updated states. */
  relativeWidth: number;
  /** States whose new lower bound fell below the old one, or new upper rose above the old one. */
  lowerViolations: number;
  upperViolations: number;
  /** Whether some upper bound fell below its lower bound. */
  crossed: boolean;
}

/**
 * One Gauss-Seidel sweep over both bounds, stored interleaved in `bounds` (lower of state s at
 * 2s, upper at 2s+1, so one cache line serves both). Clamping keeps each side monotone once it
 * is known to be sound. Allocation-free.
 */
export function sweepBounds(
  op: Operator,
  nodes: Nodes,
  bounds: Float64Array,
  clampLower: boolean,
  clampUpper: boolean,
  stats: SweepStats,
): void {
  const { choiceStart, outcomeStart, outcomeTarget, outcomeProb } = op.model;
  const { combine, reward, discount, allowed, policy } = op;
  const { start, members, stay } = nodes;
  let relativeWidth = 0;
  let lowerViolations = 0;
  let upperViolations = 0;
  let crossed = false;
  for (let i = 0; i < nodes.count; i++) {
    const m0 = start[i];
    const m1 = start[i + 1];
    let bestLower: number;
    let bestUpper: number;
    if (combine === COMBINE_MAX) bestLower = bestUpper = stay[i] ? 0 : -Infinity;
    else if (combine === COMBINE_MIN) bestLower = bestUpper = stay[i] ? 0 : Infinity;
    else bestLower = bestUpper = 0;
    let used = 0;
    // A single state's own self-loops are solved in closed form (see selfLoopFactor).
    const self = m1 - m0 === 1 ? members[m0] : -1;
    let selfTotal = 0;
    for (let m = m0; m < m1; m++) {
      const s = members[m];
      let c0 = choiceStart[s];
      let c1 = choiceStart[s + 1];
      if (combine === COMBINE_POLICY) {
        c0 = policy![s];
        c1 = c0 + 1;
      }
      for (let c = c0; c < c1; c++) {
        if (allowed !== undefined && allowed[c] === 0) continue;
        let accLower = 0;
        let accUpper = 0;
        let selfP = 0;
        const k1 = outcomeStart[c + 1];
        for (let k = outcomeStart[c]; k < k1; k++) {
          const target = outcomeTarget[k];
          const p = outcomeProb[k];
          if (target === self) {
            selfP += p;
            continue;
          }
          const t = target << 1;
          accLower += p * bounds[t];
          accUpper += p * bounds[t + 1];
        }
        const r = reward[c];
        if (combine === COMBINE_AVERAGE || combine === COMBINE_POLICY) {
          bestLower += r + discount * accLower;
          bestUpper += r + discount * accUpper;
          selfTotal += selfP;
          used++;
          continue;
        }
        let qLower: number;
        let qUpper: number;
        const factor = selfLoopFactor(discount * selfP, 1);
        if (factor > 0) {
          qLower = (r + discount * accLower) * factor;
          qUpper = (r + discount * accUpper) * factor;
        } else if (selfP > 0) {
          qLower = r + discount * (accLower + selfP * bounds[self << 1]);
          qUpper = r + discount * (accUpper + selfP * bounds[(self << 1) + 1]);
        } else {
          qLower = r + discount * accLower;
          qUpper = r + discount * accUpper;
        }
        if (combine === COMBINE_MAX) {
          if (qLower > bestLower) bestLower = qLower;
          if (qUpper > bestUpper) bestUpper = qUpper;
        } else {
          if (qLower < bestLower) bestLower = qLower;
          if (qUpper < bestUpper) bestUpper = qUpper;
        }
      }
    }
    // A policy's one choice is an average over one.
    if ((combine === COMBINE_AVERAGE || combine === COMBINE_POLICY) && used > 0) {
      const factor = selfLoopFactor(discount * selfTotal, used);
      if (factor > 0) {
        bestLower *= factor;
        bestUpper *= factor;
      } else if (selfTotal > 0) {
        bestLower = (bestLower + discount * selfTotal * bounds[self << 1]) / used;
        bestUpper = (bestUpper + discount * selfTotal * bounds[(self << 1) + 1]) / used;
      } else {
        bestLower /= used;
        bestUpper /= used;
      }
    }
    for (let m = m0; m < m1; m++) {
      const s2 = members[m] << 1;
      let lower = bestLower;
      let upper = bestUpper;
      if (lower < bounds[s2]) {
        lowerViolations++;
        if (clampLower) lower = bounds[s2];
      }
      if (upper > bounds[s2 + 1]) {
        upperViolations++;
        if (clampUpper) upper = bounds[s2 + 1];
      }
      bounds[s2] = lower;
      bounds[s2 + 1] = upper;
      if (upper < lower) crossed = true;
      const magnitude = Math.min(Math.abs(lower), Math.abs(upper));
      const width = magnitude > RELATIVE_FROM ? ((upper - lower) * RELATIVE_FROM) / magnitude : upper - lower;
      if (!(width <= relativeWidth)) relativeWidth = width;
    }
  }
  stats.relativeWidth = relativeWidth;
  stats.lowerViolations = lowerViolations;
  stats.upperViolations = upperViolations;
  stats.crossed = crossed;
}

/** Statistics of one estimate sweep. */
export interface EstimateStats {
  /** Largest change of a value, scaled as scaledWidth scales widths. */
  change: number;
  /** Largest absolute change of a value. */
  absoluteChange: number;
  /** Smallest magnitude of an updated value. */
  minMagnitude: number;
  /** Smallest and largest signed change (new minus old). */
  minChange: number;
  maxChange: number;
}

/**
 * (The Bellman step is written out here and in sweepBounds rather than shared: a call per choice
 * in the innermost loop costs a large share of the throughput.)
 *
 * One sweep of plain value iteration on a single vector (an estimate; it becomes a bound only
 * through the contraction arguments of contractionBounds). Gauss-Seidel in place by default; with
 * a separate `out`, a Jacobi sweep that reads `value` and writes `out`. Allocation-free.
 */
export function sweepEstimate(
  op: Operator,
  nodes: Nodes,
  value: Float64Array,
  stats?: EstimateStats,
  out: Float64Array = value,
): void {
  const { choiceStart, outcomeStart, outcomeTarget, outcomeProb } = op.model;
  const { combine, reward, discount, allowed, policy } = op;
  const { start, members, stay } = nodes;
  let change = 0;
  let absoluteChange = 0;
  let minMagnitude = Infinity;
  let minChange = Infinity;
  let maxChange = -Infinity;
  for (let i = 0; i < nodes.count; i++) {
    const m0 = start[i];
    const m1 = start[i + 1];
    let best: number;
    if (combine === COMBINE_MAX) best = stay[i] ? 0 : -Infinity;
    else if (combine === COMBINE_MIN) best = stay[i] ? 0 : Infinity;
    else best = 0;
    let used = 0;
    // At discount 1 (and only in place: the contraction and MacQueen certificates of discount < 1
    // assume the plain operator), a single state's self-loops are solved in closed form.
    const self = discount === 1 && out === value && m1 - m0 === 1 ? members[m0] : -1;
    let selfTotal = 0;
    for (let m = m0; m < m1; m++) {
      const s = members[m];
      let c0 = choiceStart[s];
      let c1 = choiceStart[s + 1];
      if (combine === COMBINE_POLICY) {
        c0 = policy![s];
        c1 = c0 + 1;
      }
      for (let c = c0; c < c1; c++) {
        if (allowed !== undefined && allowed[c] === 0) continue;
        let acc = 0;
        let selfP = 0;
        const k1 = outcomeStart[c + 1];
        for (let k = outcomeStart[c]; k < k1; k++) {
          const target = outcomeTarget[k];
          if (target === self) selfP += outcomeProb[k];
          else acc += outcomeProb[k] * value[target];
        }
        if (combine === COMBINE_AVERAGE || combine === COMBINE_POLICY) {
          best += reward[c] + discount * acc;
          selfTotal += selfP;
          used++;
          continue;
        }
        const factor = selfLoopFactor(discount * selfP, 1);
        const q =
          factor > 0
            ? (reward[c] + discount * acc) * factor
            : reward[c] + discount * (selfP > 0 ? acc + selfP * value[self] : acc);
        if (combine === COMBINE_MAX) {
          if (q > best) best = q;
        } else if (q < best) best = q;
      }
    }
    // A policy's one choice is an average over one.
    if ((combine === COMBINE_AVERAGE || combine === COMBINE_POLICY) && used > 0) {
      const factor = selfLoopFactor(discount * selfTotal, used);
      if (factor > 0) best *= factor;
      else best = (selfTotal > 0 ? best + discount * selfTotal * value[self] : best) / used;
    }
    const magnitude = Math.abs(best);
    const scale = magnitude > RELATIVE_FROM ? magnitude / RELATIVE_FROM : 1;
    if (magnitude < minMagnitude) minMagnitude = magnitude;
    for (let m = m0; m < m1; m++) {
      const s = members[m];
      const signed = best - value[s];
      const delta = Math.abs(signed);
      if (signed < minChange) minChange = signed;
      if (signed > maxChange) maxChange = signed;
      if (!(delta <= absoluteChange)) absoluteChange = delta;
      if (!(delta / scale <= change)) change = delta / scale;
      out[s] = best;
    }
  }
  if (stats) {
    stats.change = change;
    stats.absoluteChange = absoluteChange;
    stats.minMagnitude = minMagnitude;
    stats.minChange = minChange;
    stats.maxChange = maxChange;
  }
}

export interface SolveOptions {
  /** Target: scaledWidth at most this at every updated state. */
  precision: number;
  /** A bound known to hold for every updated state's value, if any. */
  lowerBound?: number;
  upperBound?: number;
  /** The sweep order is a topological order of an acyclic graph: one sweep is exact. */
  acyclic: boolean;
  /** Stop after this many sweeps even if the target is not met (the bounds stay sound). */
  maxSweeps: number;
  /**
   * Where value iteration starts, per state (NaN: 0), e.g. the previous analysis' values. Only the
   * speed depends on it: the certificates below hold whatever vector is swept.
   */
  guess?: Float64Array;
}

export interface SolveResult {
  sweeps: number;
  exact: boolean;
  /** Largest relative width reached (Infinity when a side has no bound). */
  relativeWidth: number;
  /** The solver's point estimate per state, when it has one closer than the middle of the bounds. */
  estimate?: Float64Array;
}

/**
 * Bounds for the updated states, written into `bounds` (interleaved; the entries of states that
 * are not updated must already hold their final finite values, or finite placeholders for states
 * that no allowed choice can reach). Every other state's bounds stay as given.
 */
export function solveBounds(op: Operator, nodes: Nodes, bounds: Float64Array, options: SolveOptions): SolveResult {
  const { members } = nodes;
  const stats: SweepStats = { relativeWidth: Infinity, lowerViolations: 0, upperViolations: 0, crossed: false };
  if (nodes.count === 0) return { sweeps: 0, exact: true, relativeWidth: 0 };

  if (options.acyclic) {
    // Successors come first in the sweep order, so one sweep computes every value exactly.
    const value = new Float64Array(op.model.stateCount);
    for (let s = 0; s < op.model.stateCount; s++) value[s] = bounds[2 * s];
    sweepEstimate(op, nodes, value);
    for (let m = 0; m < members.length; m++) {
      const s = members[m];
      bounds[2 * s] = bounds[2 * s + 1] = value[s];
    }
    return { sweeps: 1, exact: true, relativeWidth: 0 };
  }

  let sweeps = 0;
  const setInitial = (side: 0 | 1, v: number): void => {
    for (let m = 0; m < members.length; m++) bounds[2 * members[m] + side] = v;
  };
  // Discount < 1: value iteration on one vector until the contraction bound certifies it (half the
  // memory traffic of sweeping two vectors), then interval iteration polishes if needed.
  // Discount 1: the a-priori bounds (0 for one-signed rewards, 0 and 1 for probabilities) are far
  // from the values and interval iteration closes in slowly from them, so an optimistic guess is
  // tried first; the a-priori bounds remain the fallback.
  if (op.discount < 1) {
    const found = contractionBounds(op, nodes, bounds, options);
    sweeps += found.sweeps;
    if (!found.sound) {
      setInitial(0, options.lowerBound ?? -Infinity);
      setInitial(1, options.upperBound ?? Infinity);
    }
  } else {
    const found = optimisticBounds(op, nodes, bounds, options);
    sweeps += found.sweeps;
    if (!found.lowerSound) setInitial(0, options.lowerBound ?? -Infinity);
    if (!found.upperSound) setInitial(1, options.upperBound ?? Infinity);
    if (
      (!found.lowerSound && options.lowerBound === undefined) ||
      (!found.upperSound && options.upperBound === undefined)
    ) {
      // One side has no sound bound: report the other, sound one, and an infinite width.
      return { sweeps, exact: false, relativeWidth: Infinity };
    }
  }

  // Interval iteration from sound bounds until they are close enough (from infinite bounds it
  // cannot get anywhere: then the bounds stay as they are).
  stats.relativeWidth = measureWidth(nodes, bounds);
  while (stats.relativeWidth > options.precision && stats.relativeWidth < Infinity && sweeps < options.maxSweeps) {
    sweepBounds(op, nodes, bounds, true, true, stats);
    sweeps++;
  }
  widenForRounding(op, nodes, bounds, options);
  return { sweeps, exact: false, relativeWidth: measureWidth(nodes, bounds) };
}

/**
 * Floating-point sums carry rounding: the computed fixed point can sit a few units in the last
 * place away from the true one, more so as the discount approaches 1. Widen every bound outward
 * by a margin well above that (4 machine epsilons per unit of value, divided by 1 - discount; a
 * relative 1e-12 at discount 1), then clip to the a-priori bounds, which hold exactly.
 */
function widenForRounding(op: Operator, nodes: Nodes, bounds: Float64Array, options: SolveOptions): void {
  const factor = op.discount < 1 ? (4 * Number.EPSILON) / (1 - op.discount) : 1e-12;
  const floor = options.lowerBound ?? -Infinity;
  const ceiling = options.upperBound ?? Infinity;
  for (let m = 0; m < nodes.members.length; m++) {
    const s2 = nodes.members[m] << 1;
    const lower = bounds[s2];
    const upper = bounds[s2 + 1];
    const margin = factor * Math.max(1, Math.abs(lower), Math.abs(upper));
    if (Number.isFinite(lower)) bounds[s2] = Math.max(floor, lower - margin);
    if (Number.isFinite(upper)) bounds[s2 + 1] = Math.min(ceiling, upper + margin);
  }
}

function allFinite(values: Float64Array, members: Int32Array): boolean {
  for (let m = 0; m < members.length; m++) if (!Number.isFinite(values[members[m]])) return false;
  return true;
}

export function measureWidth(nodes: Nodes, bounds: Float64Array): number {
  let widest = 0;
  for (let m = 0; m < nodes.members.length; m++) {
    const s2 = nodes.members[m] << 1;
    const width = scaledWidth(bounds[s2], bounds[s2 + 1]);
    if (!(width <= widest)) widest = width;
  }
  return widest;
}

/**
 * Discount < 1: certified value iteration on one vector, in one of two ways.
 *  - Episodic tasks (some choice ends the episode with good probability): Gauss-Seidel sweeps
 *    (with the extrapolation of refineEstimate). Gauss-Seidel value iteration is a contraction of
 *    modulus discount in the maximum norm, so after a sweep that moved no value by more than D
 *    the true value lies within discount * D / (1 - discount) of the swept vector, whatever the
 *    vector swept (M. Puterman, Markov Decision Processes, 1994, Theorems 6.3.1 and 6.3.4).
 *  - Tasks where every choice stays among the updated states with probability p >= 1/2 (continuing
 *    tasks have p = 1): Jacobi sweeps w = Tv with MacQueen's bounds (J. MacQueen, "A modified
 *    dynamic programming method for Markovian decision problems", J. Math. Anal. Appl. 14, 1966;
 *    Puterman 1994, section 6.6). With a <= w - v <= b and g = discount * p,
 *      w + a * (a >= 0 ? g / (1 - g) : discount / (1 - discount))
 *        <= V <= w + b * (b >= 0 ? discount / (1 - discount) : g / (1 - g)),
 *    since T(v + c) >= Tv + g c and T(v + c) <= Tv + discount c for c >= 0 (and the reverse for
 *    c <= 0). At p = 1 the width shrinks with the spread of w - v, which closes much faster than
 *    its size when the chain mixes.
 * Writes the bounds, intersected with the a-priori ones, once they are narrow enough.
 */
function contractionBounds(
  op: Operator,
  nodes: Nodes,
  bounds: Float64Array,
  options: SolveOptions,
): { sweeps: number; sound: boolean } {
  const { members } = nodes;
  const n = op.model.stateCount;
  const discount = op.discount;
  let value = new Float64Array(n);
  for (let s = 0; s < n; s++) value[s] = bounds[2 * s];
  const floor = options.lowerBound ?? -Infinity;
  const ceiling = options.upperBound ?? Infinity;
  for (let m = 0; m < members.length; m++)
    value[members[m]] = Math.min(ceiling, Math.max(floor, guessAt(options.guess, members[m], 0)));
  const stats: EstimateStats = {
    change: Infinity,
    absoluteChange: Infinity,
    minMagnitude: 0,
    minChange: 0,
    maxChange: 0,
  };
  // The certificate: D (largest change of the last sweep) times discount / (1 - discount).
  const factor = discount / (1 - discount);
  const staying = leastStayingProbability(op, nodes);
  const g = discount * staying;
  const stayFactor = g / (1 - g);
  const write = (base: Float64Array, lowerShift: number, upperShift: number): void => {
    for (let m = 0; m < members.length; m++) {
      const s = members[m];
      bounds[2 * s] = Math.max(floor, base[s] + lowerShift);
      bounds[2 * s + 1] = Math.min(ceiling, base[s] + upperShift);
    }
  };
  let sweeps = 0;
  if (staying >= 0.5) {
    let next = value.slice();
    while (sweeps < options.maxSweeps) {
      sweepEstimate(op, nodes, value, stats, next);
      sweeps++;
      if (!(stats.absoluteChange < Infinity)) break;
      const target = options.precision * Math.max(1, stats.minMagnitude / RELATIVE_FROM);
      const a = stats.minChange;
      const b = stats.maxChange;
      const lowerShift = a >= 0 ? a * stayFactor : a * factor;
      const upperShift = b >= 0 ? b * factor : b * stayFactor;
      if (upperShift - lowerShift <= target) {
        write(next, lowerShift, upperShift);
        return { sweeps, sound: true };
      }
      const swap = value;
      value = next;
      next = swap;
    }
    return { sweeps, sound: false };
  }
  // Gauss-Seidel: converge (with extrapolation) to about the change the certificate needs, then
  // certify with one more sweep; tighten and repeat if that sweep still moved too much.
  let tolerance = discount > 0 ? (options.precision * (1 - discount)) / (4 * discount) : Infinity;
  while (sweeps < options.maxSweeps) {
    sweeps += refineEstimate(op, nodes, value, tolerance, options.maxSweeps - sweeps, floor, ceiling);
    sweepEstimate(op, nodes, value, stats);
    sweeps++;
    if (!(stats.absoluteChange < Infinity)) break;
    const target = options.precision * Math.max(1, stats.minMagnitude / RELATIVE_FROM);
    const radius = factor * stats.absoluteChange;
    if (2 * radius <= target) {
      write(value, -radius, radius);
      return { sweeps, sound: true };
    }
    tolerance /= 16;
  }
  return { sweeps, sound: false };
}

/** The least probability, over the choices the sweeps use, of an outcome that stays among the updated states. */
function leastStayingProbability(op: Operator, nodes: Nodes): number {
  const model = op.model;
  const updated = new Uint8Array(model.stateCount);
  for (let m = 0; m < nodes.members.length; m++) updated[nodes.members[m]] = 1;
  let least = 1;
  for (let m = 0; m < nodes.members.length; m++) {
    const s = nodes.members[m];
    const c0 = op.combine === COMBINE_POLICY ? op.policy![s] : model.choiceStart[s];
    const c1 = op.combine === COMBINE_POLICY ? c0 + 1 : model.choiceStart[s + 1];
    for (let c = c0; c < c1; c++) {
      if (op.allowed && !op.allowed[c]) continue;
      let stay = 0;
      for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++)
        if (updated[model.outcomeTarget[k]]) stay += model.outcomeProb[k];
      if (stay < least) least = stay;
    }
  }
  // Rounding can leave a sum just under its true value; the bound stays valid with a smaller p.
  return Math.max(0, least - 1e-12);
}

/**
 * Gauss-Seidel sweeps on an estimate until no value moves by more than `tolerance` (scaled), at
 * most `maxSweeps`. When the largest change shrinks by a steady ratio r per sweep, one slow mode
 * dominates the error, and the estimate jumps ahead by the geometric remainder of the next change,
 * delta * r / (1 - r) (Aitken's extrapolation; e.g. Puterman 1994, section 6.6). The estimate is
 * only a guess for optimisticBounds, which proves or rejects it, so a poor jump costs sweeps, never
 * soundness. Returns the sweeps spent.
 */
function refineEstimate(
  op: Operator,
  nodes: Nodes,
  estimate: Float64Array,
  tolerance: number,
  maxSweeps: number,
  floor: number,
  ceiling: number,
): number {
  const { members } = nodes;
  const stats: EstimateStats = {
    change: Infinity,
    absoluteChange: Infinity,
    minMagnitude: 0,
    minChange: 0,
    maxChange: 0,
  };
  let previous: Float64Array | undefined;
  let lastChange = Infinity;
  let lastRatio = NaN;
  let steady = 0;
  let sweeps = 0;
  // A jump must cut the next change well below the last one; with a best or worst choice the
  // extrapolation can switch choices and undo itself, and then jumping stops.
  let jumpsAllowed = true;
  let changeBeforeJump = -1;
  while (sweeps < maxSweeps) {
    const jumping = jumpsAllowed && steady >= 3;
    if (jumping) {
      previous ??= new Float64Array(estimate.length);
      for (let m = 0; m < members.length; m++) previous[members[m]] = estimate[members[m]];
    }
    sweepEstimate(op, nodes, estimate, stats);
    sweeps++;
    // Overflowed values (rewards near the largest double) never settle: give up, the caller falls back.
    if (stats.change <= tolerance || !(stats.absoluteChange < Infinity)) break;
    if (changeBeforeJump >= 0) {
      if (stats.absoluteChange > 0.5 * changeBeforeJump) jumpsAllowed = false;
      changeBeforeJump = -1;
    }
    const ratio = stats.absoluteChange / lastChange;
    lastChange = stats.absoluteChange;
    if (jumping && previous) {
      if (ratio > 0 && ratio < 1) {
        const factor = ratio / (1 - ratio);
        for (let m = 0; m < members.length; m++) {
          const s = members[m];
          estimate[s] = Math.min(ceiling, Math.max(floor, estimate[s] + (estimate[s] - previous[s]) * factor));
        }
        changeBeforeJump = stats.absoluteChange;
      }
      steady = 0;
      lastChange = Infinity;
      lastRatio = NaN;
      continue;
    }
    // Slow, steady convergence is worth a jump; fast convergence needs none.
    steady = ratio > 0.5 && ratio < 1 && Math.abs(ratio - lastRatio) <= 0.02 * (1 - ratio) ? steady + 1 : 0;
    lastRatio = ratio;
  }
  return sweeps;
}

/**
 * Finds inductive lower and upper vectors around a value-iteration estimate (optimistic value
 * iteration). Leaves sound vectors in `bounds` for the sides it reports as sound.
 */
function optimisticBounds(
  op: Operator,
  nodes: Nodes,
  bounds: Float64Array,
  options: SolveOptions,
): { sweeps: number; lowerSound: boolean; upperSound: boolean } {
  const { members } = nodes;
  const n = op.model.stateCount;
  const stats: SweepStats = { relativeWidth: Infinity, lowerViolations: 0, upperViolations: 0, crossed: false };
  const estimate = new Float64Array(n);
  for (let s = 0; s < n; s++) estimate[s] = bounds[2 * s];
  const floor = options.lowerBound ?? -Infinity;
  const ceiling = options.upperBound ?? Infinity;
  for (let m = 0; m < members.length; m++)
    estimate[members[m]] = Math.min(ceiling, Math.max(floor, guessAt(options.guess, members[m], 0)));
  let lowerKnown = false;
  let upperKnown = false;
  let sweeps = 0;
  let tolerance = options.precision / 16;
  let guessScale = options.precision / 4;
  for (let attempt = 0; attempt < 6 && sweeps < options.maxSweeps; attempt++) {
    // Refine the estimate.
    const estimateSweeps = refineEstimate(op, nodes, estimate, tolerance, options.maxSweeps - sweeps, floor, ceiling);
    sweeps += estimateSweeps;
    if (!allFinite(estimate, members)) break;
    // Guess the missing sides around the estimate, then test them for inductiveness.
    for (let m = 0; m < members.length; m++) {
      const s = members[m];
      const v = estimate[s];
      const delta = guessScale * Math.max(1, Math.abs(v) / RELATIVE_FROM);
      // Clipping to an a-priori bound keeps the guess no less sound.
      if (!lowerKnown) bounds[2 * s] = Math.min(ceiling, Math.max(floor, v - delta));
      if (!upperKnown) bounds[2 * s + 1] = Math.max(floor, Math.min(ceiling, v + delta));
    }
    let lowerSound: boolean = lowerKnown;
    let upperSound: boolean = upperKnown;
    const verifySweeps = Math.max(8, estimateSweeps);
    for (let j = 0; j < verifySweeps && sweeps < options.maxSweeps; j++) {
      sweepBounds(op, nodes, bounds, lowerSound, upperSound, stats);
      sweeps++;
      // A sweep with no violation on a side proves that side's previous vector inductive.
      if (stats.lowerViolations === 0) lowerSound = true;
      if (stats.upperViolations === 0) upperSound = true;
      if (lowerSound && upperSound) return { sweeps, lowerSound, upperSound };
      if (stats.crossed) break;
    }
    // Keep a side proven in this attempt (its sweeps used only its own vector, so it stayed
    // sound); guess the other again from a finer estimate with a wider margin.
    lowerKnown = lowerSound;
    upperKnown = upperSound;
    tolerance /= 64;
    guessScale *= 2;
  }
  return { sweeps, lowerSound: lowerKnown, upperSound: upperKnown };
}
