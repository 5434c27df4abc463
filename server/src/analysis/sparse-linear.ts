/**
 * Sparse linear systems A x = b with A = I - (a substochastic matrix scaled by the discount), the
 * shape of every fixed-policy quantity of an MDP (values, reach probabilities, expected lengths).
 *
 * The unknowns are split into strongly connected components of A's off-diagonal pattern and
 * solved block by block, successors first, so a block's right-hand side only needs solved values
 * (block triangular form; I. Duff and J. Reid, "An implementation of Tarjan's algorithm for the
 * block triangularization of a matrix", ACM TOMS 4(2), 1978). A block of one unknown is solved in
 * closed form, a small block by dense LU with partial pivoting (G. Golub and C. Van Loan, Matrix
 * Computations, 4th ed., section 3.4), a large block by BiCGSTAB (H. van der Vorst, "Bi-CGSTAB: a
 * fast and smoothly converging variant of Bi-CG", SIAM J. Sci. Stat. Comput. 13(2), 1992) with an
 * ILU(0) preconditioner (Y. Saad, Iterative Methods for Sparse Linear Systems, 2nd ed., 2003,
 * Algorithm 10.4 and section 7.3.2), unless sparse LU in a nested-dissection order fits
 * (sparse-lu.ts; grids and corridors). Blocks are factored on first use and reused for every
 * right-hand side.
 *
 * Nothing here is trusted: callers turn a solution into bounds only through a residual
 * certificate (chain-solve.ts), so a poor solve costs precision or time, never soundness.
 */

import { sparseFactors, sparseSolve, type SparseFactors } from './sparse-lu';

/** A square sparse matrix in compressed sparse row form; each row's columns are distinct. */
export interface SparseMatrix {
  n: number;
  rowStart: Int32Array;
  column: Int32Array;
  value: Float64Array;
}

/** Largest block solved by dense LU (its cost grows with the cube of the size). */
const DENSE_LIMIT = 320;

/** Largest block (in entries) for which sparse LU is tried; its searches need eight bytes per entry more. */
const SPARSE_LU_ENTRY_LIMIT = 4_000_000;

/**
 * BiCGSTAB iterations a block may spend before it is factored by sparse LU instead. Factoring a
 * 100x100 grid costs about as much as 300 iterations, so a block solved once or twice (policy
 * iteration's evaluations) keeps the Krylov solve and a slow chain with many right-hand sides
 * (reach probabilities, lengths, certificates) switches early.
 */
const SPARSE_LU_AFTER_ITERATIONS = 150;

/**
 * The same once several more solves are expected (expectManySolves): a block that needed this
 * many iterations for one solve will need about as many for each of the next ones.
 */
const SPARSE_LU_AFTER_ITERATIONS_MANY = 30;

/** Counters for reporting: how the blocks were solved. */
export interface SolverCounters {
  /** Right-hand sides solved (each over every needed block). */
  solves: number;
  /** Blocks factored, by method. */
  closedForm: number;
  dense: number;
  /** Blocks factored by sparse LU (sparse-lu.ts). */
  sparse: number;
  krylov: number;
  /** BiCGSTAB iterations over all solves. */
  krylovIterations: number;
}

export function newSolverCounters(): SolverCounters {
  return { solves: 0, closedForm: 0, dense: 0, sparse: 0, krylov: 0, krylovIterations: 0 };
}

interface DenseFactor {
  kind: 'dense';
  size: number;
  lu: Float64Array;
  pivot: Int32Array;
}

interface KrylovFactor {
  kind: 'krylov';
  /** The block's own matrix (local indices) and its incomplete factors, stored in one CSR copy. */
  local: SparseMatrix;
  ilu: Float64Array;
  diagonalAt: Int32Array;
  /** BiCGSTAB's work vectors, kept for the block's next solve. */
  buffers?: Float64Array[];
}

interface SparseLuFactor {
  kind: 'sparse';
  factors: SparseFactors;
}

interface ScalarFactor {
  kind: 'scalar';
  diagonal: number;
}

type BlockFactor = DenseFactor | KrylovFactor | SparseLuFactor | ScalarFactor;

/**
 * A matrix with its block decomposition and lazily computed block factors. `solve` writes the
 * solution of the rows whose block is wanted and leaves 0 in the others.
 */
export class BlockSolver {
  readonly blockCount: number;
  /** blockOf[i]: the block of row i. */
  readonly blockOf: Int32Array;
  /** Rows grouped by block, blocks in successors-first order. */
  readonly order: Int32Array;
  readonly blockStart: Int32Array;
  /** localIndex[i]: the position of row i inside its block. */
  private readonly localIndex: Int32Array;
  private readonly factors: (BlockFactor | null | undefined)[];
  /** Per block, the BiCGSTAB iterations spent so far (-1 once sparse LU was tried). */
  private readonly spent: Float64Array;
  /** Set by expectManySolves: large blocks are factored by sparse LU at once where it fits. */
  private factorFirst = false;

  constructor(
    readonly matrix: SparseMatrix,
    readonly counters: SolverCounters = newSolverCounters(),
  ) {
    const blocks = stronglyConnectedBlocks(matrix);
    this.blockCount = blocks.count;
    this.blockOf = blocks.blockOf;
    this.order = blocks.order;
    this.blockStart = blocks.start;
    this.localIndex = new Int32Array(matrix.n);
    for (let b = 0; b < blocks.count; b++) {
      for (let j = blocks.start[b]; j < blocks.start[b + 1]; j++)
        this.localIndex[blocks.order[j]] = j - blocks.start[b];
    }
    this.factors = new Array(blocks.count);
    this.spent = new Float64Array(blocks.count);
  }

  /**
   * Says that several right-hand sides follow (a certificate's solves): from the next solve on,
   * large blocks not yet factored are factored by sparse LU where it fits, and a block that
   * already spent SPARSE_LU_AFTER_ITERATIONS_MANY iterations switches to it, since two
   * triangular sweeps per solve soon repay a factorization that a Krylov solve matches only for
   * a single right-hand side or a short horizon.
   */
  expectManySolves(): void {
    this.factorFirst = true;
  }

  /**
   * Solves A x = b on the rows of the blocks with wanted[block] set (all when absent). Those
   * blocks must not depend on unwanted ones except through zero values. Returns false when a
   * block could not be factored or its solve gave a value that is not finite. `guess`, when
   * given, is a starting point for the iterative blocks (a nearby system's solution);
   * `tolerance`, a residual relative to |b| at which they may stop early (for a loose solve).
   */
  solve(
    b: Float64Array,
    x: Float64Array,
    wantedBlocks?: Uint8Array,
    guess?: Float64Array,
    tolerance?: number,
  ): boolean {
    this.counters.solves++;
    const { rowStart, column, value } = this.matrix;
    x.fill(0);
    let scratch = new Float64Array(0);
    for (let blk = 0; blk < this.blockCount; blk++) {
      if (wantedBlocks && !wantedBlocks[blk]) continue;
      const first = this.blockStart[blk];
      const size = this.blockStart[blk + 1] - first;
      if (scratch.length < size) scratch = new Float64Array(Math.max(size, 2 * scratch.length));
      // The right-hand side of the block: b minus the couplings to rows already solved.
      for (let j = 0; j < size; j++) {
        const i = this.order[first + j];
        let sum = b[i];
        for (let e = rowStart[i]; e < rowStart[i + 1]; e++) {
          const col = column[e];
          if (this.blockOf[col] !== blk) sum -= value[e] * x[col];
        }
        scratch[j] = sum;
      }
      let factor = this.factorOf(blk);
      if (!factor) return false;
      if (
        factor.kind === 'krylov' &&
        this.spent[blk] >= (this.factorFirst ? SPARSE_LU_AFTER_ITERATIONS_MANY : SPARSE_LU_AFTER_ITERATIONS)
      )
        factor = this.refactored(blk, factor);
      if (factor.kind === 'scalar') {
        x[this.order[first]] = scratch[0] / factor.diagonal;
        continue;
      }
      // Most blocks are scalar (one per state of an acyclic part); only the others need a view of their own length.
      const rhs = scratch.subarray(0, size);
      if (factor.kind === 'dense') {
        luSolve(factor, rhs);
        for (let j = 0; j < size; j++) x[this.order[first + j]] = rhs[j];
      } else if (factor.kind === 'sparse') {
        sparseSolve(factor.factors, rhs, rhs);
        for (let j = 0; j < size; j++) x[this.order[first + j]] = rhs[j];
        for (let j = 0; j < size; j++) if (!Number.isFinite(rhs[j])) return false;
      } else {
        const local = new Float64Array(size);
        let start: Float64Array | undefined;
        if (guess) {
          start = new Float64Array(size);
          for (let j = 0; j < size; j++) start[j] = guess[this.order[first + j]];
        }
        // A solve that stopped short is still passed on: the caller's certificate judges it.
        const iterations = bicgstab(factor, rhs, local, start, tolerance);
        this.counters.krylovIterations += Math.abs(iterations);
        if (this.spent[blk] >= 0) this.spent[blk] += iterations < 0 ? SPARSE_LU_AFTER_ITERATIONS : iterations;
        for (let j = 0; j < size; j++) if (!Number.isFinite(local[j])) return false;
        for (let j = 0; j < size; j++) x[this.order[first + j]] = local[j];
      }
    }
    return true;
  }

  private factorOf(blk: number): BlockFactor | null {
    let factor = this.factors[blk];
    if (factor === undefined) {
      factor = this.factor(blk);
      this.factors[blk] = factor;
    }
    return factor;
  }

  /** The block's sparse LU factors in place of its Krylov solve, when they fit (tried once per block). */
  private refactored(blk: number, krylov: KrylovFactor): BlockFactor {
    this.spent[blk] = -1;
    const factors =
      krylov.local.rowStart[krylov.local.n] <= SPARSE_LU_ENTRY_LIMIT ? sparseFactors(krylov.local) : undefined;
    if (!factors) return krylov;
    this.counters.sparse++;
    const factor: SparseLuFactor = { kind: 'sparse', factors };
    this.factors[blk] = factor;
    return factor;
  }

  private factor(blk: number): BlockFactor | null {
    const first = this.blockStart[blk];
    const size = this.blockStart[blk + 1] - first;
    const { rowStart, column, value } = this.matrix;
    if (size === 1) {
      const i = this.order[first];
      let diagonal = 0;
      for (let e = rowStart[i]; e < rowStart[i + 1]; e++) if (column[e] === i) diagonal += value[e];
      this.counters.closedForm++;
      return diagonal > 0 && Number.isFinite(diagonal) ? { kind: 'scalar', diagonal } : null;
    }
    if (size <= DENSE_LIMIT) {
      const lu = new Float64Array(size * size);
      for (let j = 0; j < size; j++) {
        const i = this.order[first + j];
        for (let e = rowStart[i]; e < rowStart[i + 1]; e++) {
          const col = column[e];
          if (this.blockOf[col] === blk) lu[j * size + this.localIndex[col]] += value[e];
        }
      }
      const pivot = new Int32Array(size);
      this.counters.dense++;
      return luFactor(lu, size, pivot) ? { kind: 'dense', size, lu, pivot } : null;
    }
    const local = this.localBlock(blk);
    if (this.factorFirst) {
      this.spent[blk] = -1;
      const factors = local.rowStart[local.n] <= SPARSE_LU_ENTRY_LIMIT ? sparseFactors(local) : undefined;
      if (factors) {
        this.counters.sparse++;
        return { kind: 'sparse', factors };
      }
    }
    const prepared = iluZero(local);
    this.counters.krylov++;
    return prepared ? { kind: 'krylov', local, ilu: prepared.ilu, diagonalAt: prepared.diagonalAt } : null;
  }

  /** The block's submatrix in local indices, columns sorted within each row (ILU(0) needs it). */
  private localBlock(blk: number): SparseMatrix {
    const first = this.blockStart[blk];
    const size = this.blockStart[blk + 1] - first;
    const { rowStart, column, value } = this.matrix;
    const localStart = new Int32Array(size + 1);
    for (let j = 0; j < size; j++) {
      const i = this.order[first + j];
      let count = 0;
      for (let e = rowStart[i]; e < rowStart[i + 1]; e++) if (this.blockOf[column[e]] === blk) count++;
      localStart[j + 1] = localStart[j] + count;
    }
    const localColumn = new Int32Array(localStart[size]);
    const localValue = new Float64Array(localStart[size]);
    for (let j = 0; j < size; j++) {
      const i = this.order[first + j];
      let fill = localStart[j];
      for (let e = rowStart[i]; e < rowStart[i + 1]; e++) {
        if (this.blockOf[column[e]] !== blk) continue;
        localColumn[fill] = this.localIndex[column[e]];
        localValue[fill++] = value[e];
      }
      // Rows are short: an insertion sort in place allocates nothing.
      sortRowByColumn(localColumn, localValue, localStart[j], fill);
    }
    return { n: size, rowStart: localStart, column: localColumn, value: localValue };
  }
}

/** Insertion sort of one row's entries first .. end-1 by column. */
export function sortRowByColumn(column: Int32Array, value: Float64Array, first: number, end: number): void {
  for (let e = first + 1; e < end; e++) {
    const c = column[e];
    const v = value[e];
    let f = e - 1;
    while (f >= first && column[f] > c) {
      column[f + 1] = column[f];
      value[f + 1] = value[f];
      f--;
    }
    column[f + 1] = c;
    value[f + 1] = v;
  }
}

/** y = A x. */
export function multiply(matrix: SparseMatrix, x: Float64Array, y: Float64Array): void {
  const { n, rowStart, column, value } = matrix;
  for (let i = 0; i < n; i++) {
    let sum = 0;
    for (let e = rowStart[i]; e < rowStart[i + 1]; e++) sum += value[e] * x[column[e]];
    y[i] = sum;
  }
}

/**
 * Strongly connected components of the pattern of a sparse matrix (edges i -> column of each
 * off-diagonal entry), by Tarjan's algorithm written with explicit stacks, in the order Tarjan
 * completes them: each block after every block it depends on.
 */
export function stronglyConnectedBlocks(matrix: SparseMatrix): {
  count: number;
  blockOf: Int32Array;
  order: Int32Array;
  start: Int32Array;
} {
  const { n, rowStart, column } = matrix;
  const index = new Int32Array(n).fill(-1);
  const low = new Int32Array(n);
  const onStack = new Uint8Array(n);
  const blockOf = new Int32Array(n).fill(-1);
  const order = new Int32Array(n);
  const starts: number[] = [0];
  const stack = new Int32Array(n);
  const frameRow = new Int32Array(n);
  const frameEdge = new Int32Array(n);
  let stackTop = 0;
  let nextIndex = 0;
  let fill = 0;
  let count = 0;
  for (let root = 0; root < n; root++) {
    if (index[root] >= 0) continue;
    let depth = 0;
    index[root] = low[root] = nextIndex++;
    stack[stackTop++] = root;
    onStack[root] = 1;
    frameRow[0] = root;
    frameEdge[0] = rowStart[root];
    depth = 1;
    while (depth > 0) {
      const v = frameRow[depth - 1];
      const e = frameEdge[depth - 1];
      if (e < rowStart[v + 1]) {
        frameEdge[depth - 1] = e + 1;
        const w = column[e];
        if (w === v) continue;
        if (index[w] < 0) {
          index[w] = low[w] = nextIndex++;
          stack[stackTop++] = w;
          onStack[w] = 1;
          frameRow[depth] = w;
          frameEdge[depth] = rowStart[w];
          depth++;
        } else if (onStack[w] && index[w] < low[v]) {
          low[v] = index[w];
        }
        continue;
      }
      depth--;
      if (depth > 0) {
        const parent = frameRow[depth - 1];
        if (low[v] < low[parent]) low[parent] = low[v];
      }
      if (low[v] === index[v]) {
        let w: number;
        do {
          w = stack[--stackTop];
          onStack[w] = 0;
          blockOf[w] = count;
          order[fill++] = w;
        } while (w !== v);
        count++;
        starts.push(fill);
      }
    }
  }
  return { count, blockOf, order, start: Int32Array.from(starts) };
}

/** In-place LU with partial pivoting of a row-major size x size matrix; false if singular. */
function luFactor(a: Float64Array, size: number, pivot: Int32Array): boolean {
  for (let k = 0; k < size; k++) {
    let best = k;
    let bestAbs = Math.abs(a[k * size + k]);
    for (let i = k + 1; i < size; i++) {
      const v = Math.abs(a[i * size + k]);
      if (v > bestAbs) {
        bestAbs = v;
        best = i;
      }
    }
    if (!(bestAbs > 0) || !Number.isFinite(bestAbs)) return false;
    pivot[k] = best;
    if (best !== k) {
      for (let j = 0; j < size; j++) {
        const t = a[k * size + j];
        a[k * size + j] = a[best * size + j];
        a[best * size + j] = t;
      }
    }
    const pivotValue = a[k * size + k];
    for (let i = k + 1; i < size; i++) {
      const factor = a[i * size + k] / pivotValue;
      if (factor === 0) continue;
      a[i * size + k] = factor;
      for (let j = k + 1; j < size; j++) a[i * size + j] -= factor * a[k * size + j];
    }
  }
  return true;
}

function luSolve(factor: DenseFactor, b: Float64Array): void {
  const { size, lu, pivot } = factor;
  for (let k = 0; k < size; k++) {
    const p = pivot[k];
    if (p !== k) {
      const t = b[k];
      b[k] = b[p];
      b[p] = t;
    }
  }
  for (let i = 0; i < size; i++) {
    let sum = b[i];
    for (let j = 0; j < i; j++) sum -= lu[i * size + j] * b[j];
    b[i] = sum;
  }
  for (let i = size - 1; i >= 0; i--) {
    let sum = b[i];
    for (let j = i + 1; j < size; j++) sum -= lu[i * size + j] * b[j];
    b[i] = sum / lu[i * size + i];
  }
}

/**
 * ILU(0): the incomplete LU factors that keep A's sparsity pattern (Saad 2003, Algorithm 10.4),
 * stored in one array beside A's columns (unit lower part below the diagonal, U on and above).
 * Undefined when a pivot vanishes (it cannot for a nonsingular M-matrix, which the callers have).
 */
function iluZero(matrix: SparseMatrix): { ilu: Float64Array; diagonalAt: Int32Array } | undefined {
  const { n, rowStart, column, value } = matrix;
  const ilu = value.slice();
  const diagonalAt = new Int32Array(n).fill(-1);
  const position = new Int32Array(n).fill(-1);
  for (let i = 0; i < n; i++) {
    for (let e = rowStart[i]; e < rowStart[i + 1]; e++) position[column[e]] = e;
    for (let e = rowStart[i]; e < rowStart[i + 1]; e++) {
      const k = column[e];
      if (k >= i) {
        if (k === i) diagonalAt[i] = e;
        continue;
      }
      const pivot = ilu[diagonalAt[k]];
      const factor = ilu[e] / pivot;
      ilu[e] = factor;
      for (let f = diagonalAt[k] + 1; f < rowStart[k + 1]; f++) {
        const at = position[column[f]];
        if (at >= 0) ilu[at] -= factor * ilu[f];
      }
    }
    for (let e = rowStart[i]; e < rowStart[i + 1]; e++) position[column[e]] = -1;
    if (diagonalAt[i] < 0 || !(Math.abs(ilu[diagonalAt[i]]) > 0) || !Number.isFinite(ilu[diagonalAt[i]]))
      return undefined;
  }
  return { ilu, diagonalAt };
}

/** z = (LU)^-1 r with the ILU(0) factors. */
function iluApply(factor: KrylovFactor, r: Float64Array, z: Float64Array): void {
  const { rowStart, column, n } = factor.local;
  const { ilu, diagonalAt } = factor;
  for (let i = 0; i < n; i++) {
    let sum = r[i];
    for (let e = rowStart[i]; e < diagonalAt[i]; e++) sum -= ilu[e] * z[column[e]];
    z[i] = sum;
  }
  for (let i = n - 1; i >= 0; i--) {
    let sum = z[i];
    for (let e = diagonalAt[i] + 1; e < rowStart[i + 1]; e++) sum -= ilu[e] * z[column[e]];
    z[i] = sum / ilu[diagonalAt[i]];
  }
}

function infinityNorm(v: Float64Array): number {
  let m = 0;
  for (let i = 0; i < v.length; i++) {
    const a = Math.abs(v[i]);
    if (!(a <= m)) m = a;
  }
  return m;
}

function dot(a: Float64Array, b: Float64Array): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i] * b[i];
  return s;
}

/**
 * Right-preconditioned BiCGSTAB (van der Vorst 1992; Saad 2003, Algorithm 7.7), restarted from the
 * true residual on breakdown. It stops at a residual near the rounding floor (a few units of
 * |b| + |A||x| in the last place) or when the residual stops shrinking. Returns the iterations
 * spent, negated when the residual stayed far above that floor (the best iterate is left in x).
 */
function bicgstab(factor: KrylovFactor, b: Float64Array, x: Float64Array, guess?: Float64Array, tolerance = 0): number {
  const matrix = factor.local;
  const n = matrix.n;
  const bNorm = infinityNorm(b);
  if (bNorm === 0) {
    x.fill(0);
    return 0;
  }
  const enough = tolerance * bNorm;
  // Every buffer is written before it is read, so the block's last ones serve again.
  factor.buffers ??= Array.from({ length: 9 }, () => new Float64Array(n));
  const [r, rHat, p, v, y, s, z, t, best] = factor.buffers;
  // The rounding floor of a residual: |A| x is at most twice the largest |x| for these matrices.
  const floorOf = (xs: Float64Array): number => Math.max(enough, 64 * Number.EPSILON * (bNorm + 2 * infinityNorm(xs)));
  // Start from the preconditioner's own solution (exact for a block it factors exactly, a chain),
  // or from the guess when its residual is smaller.
  iluApply(factor, b, x);
  let bestNorm = Infinity;
  if (guess) {
    multiply(matrix, guess, r);
    for (let i = 0; i < n; i++) r[i] = b[i] - r[i];
    const guessNorm = infinityNorm(r);
    multiply(matrix, x, r);
    for (let i = 0; i < n; i++) r[i] = b[i] - r[i];
    if (guessNorm < infinityNorm(r)) x.set(guess);
  }
  const maxIterations = Math.max(200, Math.min(5000, 20 * Math.ceil(Math.sqrt(n))));
  let iterations = 0;
  for (let round = 0; round < 8 && iterations < maxIterations; round++) {
    multiply(matrix, x, r);
    for (let i = 0; i < n; i++) r[i] = b[i] - r[i];
    const trueNorm = infinityNorm(r);
    if (trueNorm < bestNorm) {
      bestNorm = trueNorm;
      best.set(x);
    } else if (round > 0) break;
    if (trueNorm <= floorOf(x)) return iterations;
    rHat.set(r);
    p.fill(0);
    v.fill(0);
    let rhoOld = 1;
    let alpha = 1;
    let omega = 1;
    let smallest = trueNorm;
    let stalled = 0;
    while (iterations < maxIterations) {
      iterations++;
      const rho = dot(rHat, r);
      if (rho === 0 || !Number.isFinite(rho)) break;
      const beta = (rho / rhoOld) * (alpha / omega);
      for (let i = 0; i < n; i++) p[i] = r[i] + beta * (p[i] - omega * v[i]);
      iluApply(factor, p, y);
      multiply(matrix, y, v);
      const denominator = dot(rHat, v);
      if (denominator === 0 || !Number.isFinite(denominator)) break;
      alpha = rho / denominator;
      for (let i = 0; i < n; i++) s[i] = r[i] - alpha * v[i];
      iluApply(factor, s, z);
      multiply(matrix, z, t);
      const tt = dot(t, t);
      omega = tt > 0 && Number.isFinite(tt) ? dot(t, s) / tt : 0;
      for (let i = 0; i < n; i++) {
        x[i] += alpha * y[i] + omega * z[i];
        r[i] = s[i] - omega * t[i];
      }
      rhoOld = rho;
      const rNorm = infinityNorm(r);
      if (!Number.isFinite(rNorm) || omega === 0) break;
      if (rNorm <= floorOf(x)) break;
      if (rNorm < 0.5 * smallest) {
        smallest = rNorm;
        stalled = 0;
      } else if (++stalled > 40) break;
    }
  }
  multiply(matrix, x, r);
  for (let i = 0; i < n; i++) r[i] = b[i] - r[i];
  const finalNorm = infinityNorm(r);
  if (!(finalNorm < bestNorm)) x.set(best);
  const reached = Math.min(finalNorm, bestNorm);
  return reached <= 1e6 * floorOf(x) ? iterations : -iterations;
}
