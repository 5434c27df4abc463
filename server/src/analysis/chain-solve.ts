/**
 * Fixed-policy quantities (values under one policy or the uniformly random policy, reach
 * probabilities, expected lengths, term totals) as sparse linear systems x = r + discount P x on
 * the states that are not decided otherwise, solved directly (sparse-linear.ts) and then certified.
 *
 * The certificate. Write A = I - discount P over the unknown states (every decided state holds
 * 0) and res = r - A x for the computed x. A second solve gives E with A E >= |res| + rounding,
 * checked row by row after scaling E up until it holds. A matrix of this sign pattern (positive
 * diagonal, non-positive elsewhere) with a positive E and A E > 0 is a nonsingular M-matrix, so
 * A^-1 >= 0 (A. Berman and R. Plemmons, Nonnegative Matrices in the Mathematical Sciences, 1994,
 * ch. 6, Theorem 2.3, condition I27); hence |v - x| = |A^-1 res| <= A^-1 |res| <= E, and x -+ E
 * are sound bounds on the true values v, state by state. Rounding of every sum the check relies on
 * is added to it (a few units in the last place per term, as in N. Higham, Accuracy and Stability
 * of Numerical Algorithms, 2nd ed., section 3.1). Nothing else about the solve is trusted.
 */
import type { CompiledModel } from '../model/compiled';
import type { ModelGraph } from './graph';
import { scaledWidth } from './interval-iteration';
import { BlockSolver, newSolverCounters, type SolverCounters, type SparseMatrix } from './sparse-linear';

/** The linear system of one Markov chain (a policy's choices, or all choices averaged) at one discount. */
export interface ChainSystem {
  model: CompiledModel;
  /** rowOf[s]: the row of state s, -1 for absorbing states. */
  rowOf: Int32Array;
  stateOf: Int32Array;
  /** Per row, the choices that make it up, with their weight (1 / number of choices). */
  choicesOf: (row: number) => { first: number; end: number; weight: number };
  /** The number of choices a row averages (1 under a policy). */
  choiceCount: (row: number) => number;
  matrix: SparseMatrix;
  solver: BlockSolver;
  discount: number;
}

/**
 * Builds the system for a policy (its choice per state) or, without one, for the uniformly
 * random policy over every choice.
 */
export function buildChainSystem(model: CompiledModel, graph: ModelGraph, policy: Int32Array | undefined, discount: number, counters: SolverCounters = newSolverCounters()): ChainSystem {
  const n = model.stateCount;
  const { choiceStart, outcomeStart, outcomeTarget, outcomeProb } = model;
  const rowOf = new Int32Array(n).fill(-1);
  let rows = 0;
  for (let s = 0; s < n; s++) if (!graph.absorbing[s]) rowOf[s] = rows++;
  const stateOf = new Int32Array(rows);
  for (let s = 0; s < n; s++) if (rowOf[s] >= 0) stateOf[rowOf[s]] = s;
  const choicesOf = (row: number): { first: number; end: number; weight: number } => {
    const s = stateOf[row];
    if (policy) return { first: policy[s], end: policy[s] + 1, weight: 1 };
    return { first: choiceStart[s], end: choiceStart[s + 1], weight: 1 / (choiceStart[s + 1] - choiceStart[s]) };
  };
  // Two passes: count distinct columns per row, then fill; `seen` merges repeated targets.
  const seen = new Int32Array(rows).fill(-1);
  const rowStart = new Int32Array(rows + 1);
  for (let i = 0; i < rows; i++) {
    const { first, end } = choicesOf(i);
    let count = 1;
    seen[i] = i;
    for (let c = first; c < end; c++) {
      for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) {
        const j = rowOf[outcomeTarget[k]];
        if (j < 0 || outcomeProb[k] === 0 || seen[j] === i) continue;
        seen[j] = i;
        count++;
      }
    }
    rowStart[i + 1] = rowStart[i] + count;
  }
  seen.fill(-1);
  const column = new Int32Array(rowStart[rows]);
  const value = new Float64Array(rowStart[rows]);
  for (let i = 0; i < rows; i++) {
    const { first, end, weight } = choicesOf(i);
    let fill = rowStart[i];
    column[fill] = i;
    value[fill] = 1;
    seen[i] = fill++;
    for (let c = first; c < end; c++) {
      for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) {
        const j = rowOf[outcomeTarget[k]];
        if (j < 0 || outcomeProb[k] === 0) continue;
        if (seen[j] < rowStart[i]) {
          column[fill] = j;
          value[fill] = 0;
          seen[j] = fill++;
        }
        value[seen[j]] -= discount * weight * outcomeProb[k];
      }
    }
  }
  const matrix: SparseMatrix = { n: rows, rowStart, column, value };
  const choiceCount = (row: number): number => (policy ? 1 : choiceStart[stateOf[row] + 1] - choiceStart[stateOf[row]]);
  return { model, rowOf, stateOf, choicesOf, choiceCount, matrix, solver: new BlockSolver(matrix, counters), discount };
}

/**
 * Sound bounds on the values of `iterate` states (each a finite-valued, non-absorbing state;
 * every other state's value is 0) for the reward `reward` per choice, or undefined when the solve
 * or its certificate fails, or the bounds are wider than `precision` (scaled as scaledWidth).
 * The bounds are written interleaved into `bounds` (lower at 2s, upper at 2s+1).
 */
export function certifiedChainSolve(
  system: ChainSystem,
  reward: Float64Array,
  iterate: Uint8Array,
  options: { precision: number; lowerBound?: number; upperBound?: number },
  bounds: Float64Array,
): boolean {
  const { matrix, solver, stateOf } = system;
  const rows = matrix.n;
  // The wanted blocks are those of iterate states; a block the mask only partly covers is not a
  // shape this solve handles.
  const wanted = new Uint8Array(solver.blockCount);
  const mixed = new Uint8Array(solver.blockCount);
  for (let i = 0; i < rows; i++) {
    const b = solver.blockOf[i];
    if (iterate[stateOf[i]]) wanted[b] = 1;
    else mixed[b] = 1;
  }
  for (let b = 0; b < wanted.length; b++) if (wanted[b] && mixed[b]) return false;

  const rhs = new Float64Array(rows);
  for (let i = 0; i < rows; i++) {
    if (!wanted[solver.blockOf[i]]) continue;
    const { first, end, weight } = system.choicesOf(i);
    let sum = 0;
    for (let c = first; c < end; c++) sum += reward[c];
    rhs[i] = sum * weight;
  }
  const x = new Float64Array(rows);
  if (!solver.solve(rhs, x, wanted)) return false;
  const residual = new Float64Array(rows);
  const residualError = new Float64Array(rows);
  let worst = modelResidual(system, reward, x, wanted, residual, residualError);
  // Iterative refinement with a residual computed in double-double (Higham 2002, ch. 12): a
  // correction or two bring the residual to the rounding floor of x itself.
  const correction = new Float64Array(rows);
  const trial = new Float64Array(rows);
  const trialResidual = new Float64Array(rows);
  const trialError = new Float64Array(rows);
  for (let round = 0; round < 3 && worst > 0; round++) {
    for (let i = 0; i < rows; i++) correction[i] = residual[i] / system.choiceCount(i);
    const step = new Float64Array(rows);
    if (!solver.solve(correction, step, wanted)) break;
    for (let i = 0; i < rows; i++) trial[i] = x[i] + step[i];
    const trialWorst = modelResidual(system, reward, trial, wanted, trialResidual, trialError);
    if (!(trialWorst < worst)) break;
    x.set(trial);
    residual.set(trialResidual);
    residualError.set(trialError);
    worst = trialWorst;
  }
  if (!Number.isFinite(worst)) return false;
  const radius = errorBound(system, residual, residualError, wanted);
  if (!radius) return false;

  const floor = options.lowerBound ?? -Infinity;
  const ceiling = options.upperBound ?? Infinity;
  for (let i = 0; i < rows; i++) {
    if (!wanted[solver.blockOf[i]]) continue;
    // The two subtractions below round too; two units in the last place cover them.
    const margin = 2 * Number.EPSILON * (Math.abs(x[i]) + radius[i]);
    const lower = Math.max(floor, x[i] - radius[i] - margin);
    const upper = Math.min(ceiling, x[i] + radius[i] + margin);
    if (!(scaledWidth(lower, upper) <= options.precision)) return false;
    const s = stateOf[i];
    bounds[2 * s] = lower;
    bounds[2 * s + 1] = upper;
  }
  return true;
}

/** Veltkamp's splitting constant for Dekker's exact product (2^27 + 1). */
const SPLIT = 134217729;

/**
 * The rounding error of the product p = a * b, exactly: a * b = p + error (T. Dekker, "A
 * floating-point technique for extending the available precision", Numer. Math. 18, 1971).
 */
function productError(a: number, b: number, p: number): number {
  let t = SPLIT * a;
  const aHigh = t - (t - a);
  const aLow = a - aHigh;
  t = SPLIT * b;
  const bHigh = t - (t - b);
  const bLow = b - bHigh;
  return aLow * bLow - (p - aHigh * bHigh - aLow * bHigh - aHigh * bLow);
}

/**
 * The residual of every wanted row of the scaled equation m x_s = sum_c (r_c + discount sum_k
 * p_k x_k) (m the number of choices averaged), from the model's own coefficients, summed in
 * double-double (T. Ogita, S. Rump and S. Oishi, "Accurate sum and dot product", SIAM J. Sci.
 * Comput. 26(6), 2005, algorithm Dot2). Writes the residual and a bound on its computing error
 * (their Proposition 5.5, with room to spare); returns the largest |residual| + error.
 */
function modelResidual(system: ChainSystem, reward: Float64Array, x: Float64Array, wanted: Uint8Array, residual: Float64Array, error: Float64Array): number {
  const { model, rowOf, stateOf, solver, discount } = system;
  const { outcomeStart, outcomeTarget, outcomeProb } = model;
  let worst = 0;
  for (let i = 0; i < stateOf.length; i++) {
    if (!wanted[solver.blockOf[i]]) {
      residual[i] = error[i] = 0;
      continue;
    }
    const { first, end } = system.choicesOf(i);
    let high = 0;
    let low = 0;
    let magnitude = 0;
    let terms = 0;
    const add = (v: number): void => {
      const sum = high + v;
      const z = sum - high;
      low += high - (sum - z) + (v - z);
      high = sum;
      magnitude += Math.abs(v);
      terms++;
    };
    const m = end - first;
    const own = -m * x[i];
    add(own);
    low += -productError(m, x[i], -own);
    for (let c = first; c < end; c++) {
      add(reward[c]);
      for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) {
        const j = rowOf[outcomeTarget[k]];
        const p = outcomeProb[k];
        if (j < 0 || p === 0) continue;
        const product = p * x[j];
        const productLow = productError(p, x[j], product);
        if (discount === 1) {
          add(product);
          low += productLow;
        } else {
          const scaled = discount * product;
          add(scaled);
          low += productError(discount, product, scaled) + discount * productLow;
        }
      }
    }
    const value = high + low;
    residual[i] = value;
    const bound = 2 * Number.EPSILON * Math.abs(value) + (4 * terms * Number.EPSILON) ** 2 * magnitude;
    error[i] = bound;
    const total = Math.abs(value) + bound;
    if (!(total <= worst)) worst = total;
  }
  return worst;
}

/**
 * A vector E > 0 with (m A) E >= |res| + its error on every wanted row, checked from the model's
 * coefficients: the solution of A E = that target / m, scaled up until the check holds. E > 0
 * with A E > 0 makes A a nonsingular M-matrix, so |v - x| = |A^-1 res / m| <= E row by row.
 * Undefined when the check fails.
 */
function errorBound(system: ChainSystem, residual: Float64Array, residualError: Float64Array, wanted: Uint8Array): Float64Array | undefined {
  const { model, rowOf, stateOf, solver, discount } = system;
  const { outcomeStart, outcomeTarget, outcomeProb } = model;
  const n = stateOf.length;
  const target = new Float64Array(n);
  const scaledTarget = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    if (!wanted[solver.blockOf[i]]) continue;
    // A tiny floor keeps every entry positive, as the M-matrix test needs.
    target[i] = Math.abs(residual[i]) + residualError[i] + 1e-290;
    scaledTarget[i] = target[i] / system.choiceCount(i);
  }
  const bound = new Float64Array(n);
  if (!solver.solve(scaledTarget, bound, wanted)) return undefined;
  let scale = 1;
  for (let i = 0; i < n; i++) {
    if (!wanted[solver.blockOf[i]]) continue;
    if (!(bound[i] > 0) || !Number.isFinite(bound[i])) return undefined;
    const { first, end } = system.choicesOf(i);
    let sum = (end - first) * bound[i];
    let magnitude = sum;
    let terms = 1;
    for (let c = first; c < end; c++) {
      for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) {
        const j = rowOf[outcomeTarget[k]];
        if (j < 0) continue;
        const term = discount * outcomeProb[k] * bound[j];
        sum -= term;
        magnitude += term;
        terms++;
      }
    }
    const least = sum - (2 * terms + 4) * Number.EPSILON * magnitude;
    if (!(least > 0)) return undefined;
    if (target[i] / least > scale) scale = target[i] / least;
  }
  // The scaled vector is rounded too; a relative 1e-12 more covers it.
  scale *= 1 + 1e-12;
  for (let i = 0; i < n; i++) bound[i] *= scale;
  return bound;
}
