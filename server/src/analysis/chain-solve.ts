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
import { guessesAt } from './warm-start';
import {
  BlockSolver,
  newSolverCounters,
  sortRowByColumn,
  type SolverCounters,
  type SparseMatrix,
} from './sparse-linear';

/**
 * How the rows of a system map to the model: rowOf[s] is the row of state s (several states may
 * share a row: a collapsed end component) or -1 for a state whose value is 0; each row averages
 * the choices first[row] .. end[row]-1 (none: the row's value is 0, as for "stay forever for
 * nothing"). Typed arrays rather than a function: every pass over the system reads them per row.
 */
export interface RowLayout {
  rows: number;
  rowOf: Int32Array;
  first: Int32Array;
  end: Int32Array;
}

/** The linear system x = r + discount P x of a layout, with its block solver. */
export interface LinearSystem {
  model: CompiledModel;
  layout: RowLayout;
  matrix: SparseMatrix;
  solver: BlockSolver;
  discount: number;
  /**
   * A vector D > 0 with (m A) D >= 1 on the rows of `wanted` blocks, checked as errorBound checks
   * E, found by the first certificate on this system that needed one. Every later residual r is
   * then covered by max |r| times D without a solve (the residual times a verified bound on the
   * expected remaining steps, when the discount is 1).
   */
  errorDirection?: { wanted: Uint8Array; vector: Float64Array };
  /**
   * An error direction per row from an earlier analysis (a warm start, see offerEarlierDirection;
   * NaN where it had none), tried before solving for one. It is only a candidate: it is kept when
   * it passes the same row-by-row check as a solved direction, so an edit that changed the system
   * costs a solve, never soundness.
   */
  earlierDirection?: Float64Array;
}

/**
 * From this discount up (an effective horizon of 100 steps or more) a certificate's system is
 * factored before its first solve: on the 100x100 grid this took 25-45% off the solver's work
 * at discounts 0.9 to 1 against iterating first (DEVELOPERS.md, performance notes).
 */
const LONG_HORIZON_DISCOUNT = 0.99;

/** A chain's system with the state of each row (one state per row). */
export interface ChainSystem extends LinearSystem {
  stateOf: Int32Array;
}

/** The number of choices a row averages; a row without choices counts as one (x = 0). */
function weightCount(layout: RowLayout, row: number): number {
  return Math.max(1, layout.end[row] - layout.first[row]);
}

/** Assembles I - discount P of a layout in CSR form, repeated targets merged, columns sorted. */
export function buildLinearSystem(
  model: CompiledModel,
  layout: RowLayout,
  discount: number,
  counters: SolverCounters = newSolverCounters(),
): LinearSystem {
  const { outcomeStart, outcomeTarget, outcomeProb } = model;
  const { rows, rowOf } = layout;
  // Two passes: count distinct columns per row, then fill; `seen` merges repeated targets.
  const seen = new Int32Array(rows).fill(-1);
  const rowStart = new Int32Array(rows + 1);
  for (let i = 0; i < rows; i++) {
    const first = layout.first[i];
    const end = layout.end[i];
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
    const first = layout.first[i];
    const end = layout.end[i];
    const weight = 1 / weightCount(layout, i);
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
    sortRowByColumn(column, value, rowStart[i], rowStart[i + 1]);
  }
  const matrix: SparseMatrix = { n: rows, rowStart, column, value };
  return { model, layout, matrix, solver: new BlockSolver(matrix, counters), discount };
}

/**
 * The system of a policy (its choice per state) or, without one, of the uniformly random policy
 * over every choice; one row per non-absorbing state.
 */
export function buildChainSystem(
  model: CompiledModel,
  graph: ModelGraph,
  policy: Int32Array | undefined,
  discount: number,
  counters?: SolverCounters,
): ChainSystem {
  const n = model.stateCount;
  const { choiceStart } = model;
  const rowOf = new Int32Array(n).fill(-1);
  let rows = 0;
  for (let s = 0; s < n; s++) if (!graph.absorbing[s]) rowOf[s] = rows++;
  const stateOf = new Int32Array(rows);
  for (let s = 0; s < n; s++) if (rowOf[s] >= 0) stateOf[rowOf[s]] = s;
  const first = new Int32Array(rows);
  const end = new Int32Array(rows);
  for (let row = 0; row < rows; row++) {
    const s = stateOf[row];
    first[row] = policy ? policy[s] : choiceStart[s];
    end[row] = policy ? policy[s] + 1 : choiceStart[s + 1];
  }
  return { ...buildLinearSystem(model, { rows, rowOf, first, end }, discount, counters), stateOf };
}

/** The wanted blocks of a chain system for the `iterate` states, or undefined when a block is only partly covered. */
function wantedBlocksOf(system: ChainSystem, iterate: Uint8Array): Uint8Array | undefined {
  const { solver, stateOf } = system;
  const wanted = new Uint8Array(solver.blockCount);
  const other = new Uint8Array(solver.blockCount);
  for (let i = 0; i < stateOf.length; i++) {
    if (iterate[stateOf[i]]) wanted[solver.blockOf[i]] = 1;
    else other[solver.blockOf[i]] = 1;
  }
  for (let b = 0; b < wanted.length; b++) if (wanted[b] && other[b]) return undefined;
  return wanted;
}

/**
 * Sound bounds on the values of `iterate` states (each a finite-valued, non-absorbing state;
 * every other state's value is 0) for the reward `reward` per choice, written interleaved into
 * `bounds` (lower at 2s, upper at 2s+1). False, with nothing written, when the solve or its
 * certificate fails or the bounds are wider than `precision` (scaled as scaledWidth). `guess`
 * (per state, NaN: none) is where the iterative blocks start; `estimate`, when given, receives
 * the solve's x per state (what a later solve of a nearby system may start from).
 */
export function certifiedChainSolve(
  system: ChainSystem,
  reward: Float64Array,
  iterate: Uint8Array,
  options: { precision: number; lowerBound?: number; upperBound?: number },
  bounds: Float64Array,
  guess?: Float64Array,
  estimate?: Float64Array,
): boolean {
  const wanted = wantedBlocksOf(system, iterate);
  if (!wanted) return false;
  const rowGuess = guess ? guessesAt(guess, system.stateOf, 0) : undefined;
  const solved = certifiedSolve(system, reward, wanted, 0, rowGuess, options.precision);
  if (!solved) return false;
  const { x, radius } = solved;
  const floor = options.lowerBound ?? -Infinity;
  const ceiling = options.upperBound ?? Infinity;
  const { blockOf } = system.solver;
  const lower = new Float64Array(x.length);
  const upper = new Float64Array(x.length);
  for (let i = 0; i < x.length; i++) {
    if (!wanted[blockOf[i]]) continue;
    lower[i] = Math.max(floor, x[i] - radius[i]);
    upper[i] = Math.min(ceiling, x[i] + radius[i]);
    if (!(scaledWidth(lower[i], upper[i]) <= options.precision)) return false;
  }
  for (let i = 0; i < x.length; i++) {
    if (!wanted[blockOf[i]]) continue;
    bounds[2 * system.stateOf[i]] = lower[i];
    bounds[2 * system.stateOf[i] + 1] = upper[i];
    if (estimate) estimate[system.stateOf[i]] = x[i];
  }
  return true;
}

/**
 * Solves the system for `reward` on the wanted blocks (rows elsewhere are 0; a row without
 * choices is the constant `emptyRowValue`) and certifies it:
 * the true solution lies within x -+ radius, row by row (the two roundings of forming x -+ radius
 * included). Undefined when a solve or the certificate fails.
 */
export function certifiedSolve(
  system: LinearSystem,
  reward: Float64Array,
  wanted?: Uint8Array,
  emptyRowValue = 0,
  guess?: Float64Array,
  precision?: number,
): { x: Float64Array; radius: Float64Array } | undefined {
  const { matrix, solver, layout } = system;
  const rows = matrix.n;
  const want = wanted ?? new Uint8Array(solver.blockCount).fill(1);
  // A certificate solves at least twice more on this system. A first solve from nothing at a long
  // horizon takes many Krylov iterations, so such systems factor at once; from a guess, or at a
  // short horizon, the first solve stays iterative and its iteration count decides.
  if (!guess && system.discount >= LONG_HORIZON_DISCOUNT) solver.expectManySolves();
  const x = approximateSolve(system, reward, want, emptyRowValue, guess);
  if (!x) return undefined;
  solver.expectManySolves();
  const residual = new Float64Array(rows);
  const residualError = new Float64Array(rows);
  let worst = modelResidual(system, reward, emptyRowValue, x, want, residual, residualError);
  if (!Number.isFinite(worst)) return undefined;
  // When the first solve's bound is already well inside the precision, refinement would only
  // cost solves; the bound is as sound either way.
  if (precision !== undefined) {
    const early = certifiedRadius(system, x, residual, residualError, want, precision);
    if (early && withinPrecision(x, early, want, solver.blockOf, precision / 4)) return { x, radius: early };
  }
  // Iterative refinement with a residual computed in double-double (Higham 2002, ch. 12): a
  // correction or two bring the residual to the rounding floor of x itself.
  const correction = new Float64Array(rows);
  const step = new Float64Array(rows);
  const trial = new Float64Array(rows);
  const trialResidual = new Float64Array(rows);
  const trialError = new Float64Array(rows);
  for (let round = 0; round < 3 && worst > 0; round++) {
    for (let i = 0; i < rows; i++) correction[i] = residual[i] / weightCount(layout, i);
    if (!solver.solve(correction, step, want)) break;
    for (let i = 0; i < rows; i++) trial[i] = x[i] + step[i];
    const trialWorst = modelResidual(system, reward, emptyRowValue, trial, want, trialResidual, trialError);
    if (!(trialWorst < worst)) break;
    x.set(trial);
    residual.set(trialResidual);
    residualError.set(trialError);
    worst = trialWorst;
  }
  if (!Number.isFinite(worst)) return undefined;
  const radius = certifiedRadius(system, x, residual, residualError, want, precision);
  return radius ? { x, radius } : undefined;
}

/**
 * The certified radius around x from its residual, including the rounding of forming x -+ radius.
 * With a precision, the system's error direction is tried first (no solve once it is known), and
 * kept when its radius is within a quarter of the precision.
 */
function certifiedRadius(
  system: LinearSystem,
  x: Float64Array,
  residual: Float64Array,
  residualError: Float64Array,
  want: Uint8Array,
  precision?: number,
): Float64Array | undefined {
  if (precision !== undefined) {
    const direction = errorDirectionOf(system, want);
    const covering = direction && coveringBound(system, direction, residual, residualError, want);
    if (covering) {
      withRounding(x, covering);
      if (withinPrecision(x, covering, want, system.solver.blockOf, precision / 4)) return covering;
    }
  }
  const radius = errorBound(system, residual, residualError, want);
  if (!radius) return undefined;
  withRounding(x, radius);
  return radius;
}

function withRounding(x: Float64Array, radius: Float64Array): void {
  // The subtraction and addition that form x -+ radius round too; two units in the last place cover them.
  for (let i = 0; i < x.length; i++) radius[i] += 2 * Number.EPSILON * (Math.abs(x[i]) + radius[i]);
}

/**
 * The system's error direction for the wanted blocks: the cached one when its blocks cover them,
 * else the earlier analysis's one when it passes the check, else a new one (undefined when none
 * is found).
 */
function errorDirectionOf(system: LinearSystem, want: Uint8Array): Float64Array | undefined {
  const cached = system.errorDirection;
  if (cached) {
    let covers = true;
    for (let b = 0; b < want.length && covers; b++) if (want[b] && !cached.wanted[b]) covers = false;
    if (covers) return cached.vector;
  }
  const ones = new Float64Array(system.layout.rows).fill(1);
  const earlier = earlierDirectionRows(system, want);
  const adopted = earlier && scaledToCover(system, earlier, ones, want);
  const vector =
    adopted instanceof Float64Array
      ? adopted
      : scaledErrorBound(system, ones, new Float64Array(ones.length), want, 0, 1e-5);
  if (!vector || vector === 'rounding') return undefined;
  system.errorDirection = { wanted: want.slice(), vector };
  return vector;
}

/** A copy of the earlier direction on the wanted rows (0 elsewhere), or undefined when some wanted row has none. */
function earlierDirectionRows(system: LinearSystem, want: Uint8Array): Float64Array | undefined {
  const earlier = system.earlierDirection;
  if (!earlier) return undefined;
  const rows = new Float64Array(system.layout.rows);
  for (let i = 0; i < rows.length; i++) {
    if (!want[system.solver.blockOf[i]]) continue;
    const v = earlier[i];
    if (!(v > 0) || !Number.isFinite(v)) return undefined;
    rows[i] = v;
  }
  return rows;
}

/** Gives a chain system an earlier analysis's direction (per state, directionByState), unless it has one. */
export function offerEarlierDirection(system: ChainSystem, perState: Float64Array | undefined): void {
  if (system.earlierDirection || !perState || perState.length !== system.model.stateCount) return;
  system.earlierDirection = guessesAt(perState, system.stateOf);
}

/** The system's error direction per state (NaN for states without a row), for the next analysis's warm start. */
export function directionByState(system: ChainSystem): Float64Array | undefined {
  const direction = system.errorDirection;
  if (!direction) return undefined;
  const out = new Float64Array(system.model.stateCount).fill(NaN);
  for (let i = 0; i < system.stateOf.length; i++)
    if (direction.wanted[system.solver.blockOf[i]]) out[system.stateOf[i]] = direction.vector[i];
  return out;
}

/**
 * E = c D covering the residual: (m A) E >= c >= |res| + its error on every wanted row, since
 * (m A) D >= 1 was checked row by row with rounding. Berman and Plemmons' M-matrix argument of
 * errorBound applies to E unchanged. Undefined when the residual is not finite.
 */
function coveringBound(
  system: LinearSystem,
  direction: Float64Array,
  residual: Float64Array,
  residualError: Float64Array,
  want: Uint8Array,
): Float64Array | undefined {
  const { blockOf } = system.solver;
  let largest = 0;
  for (let i = 0; i < residual.length; i++)
    if (want[blockOf[i]]) largest = Math.max(largest, Math.abs(residual[i]) + residualError[i]);
  if (!Number.isFinite(largest)) return undefined;
  // The product rounds; a relative 1e-12 more covers it.
  const scale = Math.max(largest, Number.MIN_VALUE) * (1 + 1e-12);
  const bound = new Float64Array(residual.length);
  for (let i = 0; i < bound.length; i++) if (want[blockOf[i]]) bound[i] = scale * direction[i];
  return bound;
}

function withinPrecision(
  x: Float64Array,
  radius: Float64Array,
  want: Uint8Array,
  blockOf: Int32Array,
  precision: number,
): boolean {
  for (let i = 0; i < x.length; i++) {
    if (want[blockOf[i]] && !(scaledWidth(x[i] - radius[i], x[i] + radius[i]) <= precision)) return false;
  }
  return true;
}

/**
 * The solution of the system for `reward` on the wanted blocks, uncertified (a guess for policy
 * iteration's intermediate policies, whose values only steer the next improvement), or undefined
 * when the solve fails. `guess` is a starting point for the iterative blocks.
 */
export function approximateSolve(
  system: LinearSystem,
  reward: Float64Array,
  wanted: Uint8Array,
  emptyRowValue = 0,
  guess?: Float64Array,
): Float64Array | undefined {
  const { matrix, solver, layout } = system;
  const rows = matrix.n;
  const rhs = new Float64Array(rows);
  for (let i = 0; i < rows; i++) {
    if (!wanted[solver.blockOf[i]]) continue;
    const first = layout.first[i];
    const end = layout.end[i];
    let sum = first === end ? emptyRowValue : 0;
    for (let c = first; c < end; c++) sum += reward[c];
    rhs[i] = sum / weightCount(layout, i);
  }
  const x = new Float64Array(rows);
  return solver.solve(rhs, x, wanted, guess) ? x : undefined;
}

/** The rounding error of the last twoSum, read right after it (a second result without an allocation). */
let sumError = 0;

/** a + b rounded, with its exact error left in sumError (D. Knuth, The Art of Computer Programming, vol. 2, 3rd ed., section 4.2.2, TwoSum). */
function twoSum(a: number, b: number): number {
  const sum = a + b;
  const z = sum - a;
  sumError = a - (sum - z) + (b - z);
  return sum;
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
function modelResidual(
  system: LinearSystem,
  reward: Float64Array,
  emptyRowValue: number,
  x: Float64Array,
  wanted: Uint8Array,
  residual: Float64Array,
  error: Float64Array,
): number {
  const { model, solver, discount, layout } = system;
  const { rowOf } = layout;
  const { outcomeStart, outcomeTarget, outcomeProb } = model;
  let worst = 0;
  for (let i = 0; i < layout.rows; i++) {
    if (!wanted[solver.blockOf[i]]) {
      residual[i] = error[i] = 0;
      continue;
    }
    const first = layout.first[i];
    const end = layout.end[i];
    // Sum2 of Ogita, Rump and Oishi: each term's rounding error is gathered in low.
    let high = 0;
    let low = 0;
    let magnitude = 0;
    let terms = 0;
    const m = Math.max(1, end - first);
    const own = -m * x[i];
    high = twoSum(high, own);
    low += sumError - productError(m, x[i], -own);
    magnitude += Math.abs(own);
    terms++;
    if (first === end) {
      high = twoSum(high, emptyRowValue);
      low += sumError;
      magnitude += Math.abs(emptyRowValue);
      terms++;
    }
    for (let c = first; c < end; c++) {
      high = twoSum(high, reward[c]);
      low += sumError;
      magnitude += Math.abs(reward[c]);
      terms++;
      for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) {
        const j = rowOf[outcomeTarget[k]];
        const p = outcomeProb[k];
        if (j < 0 || p === 0) continue;
        const product = p * x[j];
        const productLow = productError(p, x[j], product);
        let term = product;
        if (discount === 1) low += productLow;
        else {
          term = discount * product;
          low += productError(discount, product, term) + discount * productLow;
        }
        high = twoSum(high, term);
        low += sumError;
        magnitude += Math.abs(term);
        terms++;
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
function errorBound(
  system: LinearSystem,
  residual: Float64Array,
  residualError: Float64Array,
  wanted: Uint8Array,
): Float64Array | undefined {
  const { layout, solver } = system;
  const n = layout.rows;
  let largest = 0;
  for (let i = 0; i < n; i++)
    if (wanted[solver.blockOf[i]]) largest = Math.max(largest, Math.abs(residual[i]) + residualError[i]);
  // A floor keeps every entry of the target positive, as the M-matrix test needs. Where A E is a
  // small difference of large entries of E the check cannot see it through rounding; a higher
  // floor (still far below the values' precision) then makes every row's A E clearly positive.
  // It starts at 1e-8 of the largest residual, which widens the widest bound by at most that
  // fraction and spares the retry that a lower floor often needs on long chains.
  // First a loose solve: with the floor at 1e-4 of the largest residual and the solve stopped at
  // 1e-5 of it, every row's A E stays above 0.9 of its target, so the check scales E by at most
  // about 1.1; a bound is as sound as the check that accepts it, however loosely it was solved.
  const loose = scaledErrorBound(system, residual, residualError, wanted, Math.max(1e-280, 1e-4 * largest), 1e-5);
  if (loose !== 'rounding' && loose !== undefined) return loose;
  for (let floor = 1e-8; floor <= 1; floor *= 1e4) {
    const bound = scaledErrorBound(system, residual, residualError, wanted, Math.max(1e-280, floor * largest));
    if (bound !== 'rounding') return bound;
  }
  return undefined;
}

function scaledErrorBound(
  system: LinearSystem,
  residual: Float64Array,
  residualError: Float64Array,
  wanted: Uint8Array,
  floor: number,
  tolerance?: number,
): Float64Array | undefined | 'rounding' {
  const { solver, layout } = system;
  const n = layout.rows;
  const target = new Float64Array(n);
  const scaledTarget = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    if (!wanted[solver.blockOf[i]]) continue;
    target[i] = Math.abs(residual[i]) + residualError[i] + floor;
    scaledTarget[i] = target[i] / weightCount(layout, i);
  }
  const bound = new Float64Array(n);
  if (!solver.solve(scaledTarget, bound, wanted, undefined, tolerance)) return undefined;
  return scaledToCover(system, bound, target, wanted);
}

/**
 * Scales `bound` (in place) until (m A) bound >= target holds on every wanted row with the
 * rounding of the check included, and returns it; undefined when some wanted entry is not
 * positive and finite, 'rounding' when a row's margin is lost in rounding. Nothing about where
 * `bound` came from is trusted.
 */
function scaledToCover(
  system: LinearSystem,
  bound: Float64Array,
  target: Float64Array,
  wanted: Uint8Array,
): Float64Array | undefined | 'rounding' {
  const { model, solver, discount, layout } = system;
  const { rowOf } = layout;
  const { outcomeStart, outcomeTarget, outcomeProb } = model;
  const n = layout.rows;
  let scale = 1;
  for (let i = 0; i < n; i++) {
    if (!wanted[solver.blockOf[i]]) continue;
    if (!(bound[i] > 0) || !Number.isFinite(bound[i])) return undefined;
    const first = layout.first[i];
    const end = layout.end[i];
    let sum = Math.max(1, end - first) * bound[i];
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
    if (!(least > 0)) return 'rounding';
    if (target[i] / least > scale) scale = target[i] / least;
  }
  // The scaled vector is rounded too; a relative 1e-12 more covers it.
  scale *= 1 + 1e-12;
  for (let i = 0; i < n; i++) bound[i] *= scale;
  return bound;
}
