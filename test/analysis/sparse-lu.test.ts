/**
 * Sparse LU in a nested-dissection order (analysis/sparse-lu.ts) and the block solver's switch to
 * it, against mathjs `lusolve` (dense LU with partial pivoting) on the same systems, and against
 * the closed form of the fair random walk's expected duration, i(N - i) (W. Feller, An
 * Introduction to Probability Theory and Its Applications, vol. 1, 3rd ed., 1968, ch. XIV, section 3).
 */
import { lup, lusolve, type Matrix } from 'mathjs';
import { describe, expect, it } from 'vitest';
import { sparseFactors, sparseSolve } from '../../server/src/analysis/sparse-lu';
import { BlockSolver, newSolverCounters, type SparseMatrix } from '../../server/src/analysis/sparse-linear';
import { seededRandom as rng } from '../reference/gridworlds';

/** CSR of I - discount P from rows of (column, probability) pairs, repeated columns merged and sorted. */
function systemOf(rows: Array<Array<[number, number]>>, discount: number): SparseMatrix {
  const n = rows.length;
  const rowStart = new Int32Array(n + 1);
  const column: number[] = [];
  const value: number[] = [];
  for (let i = 0; i < n; i++) {
    const merged = new Map<number, number>([[i, 1]]);
    for (const [j, p] of rows[i]) merged.set(j, (merged.get(j) ?? 0) - discount * p);
    for (const [j, v] of [...merged].sort((a, b) => a[0] - b[0])) {
      column.push(j);
      value.push(v);
    }
    rowStart[i + 1] = column.length;
  }
  return { n, rowStart, column: Int32Array.from(column), value: Float64Array.from(value) };
}

/** A slippery random walk on a side x side grid: each step goes to a random neighbour (or stays at a wall); `leak` ends the episode. */
function gridRows(side: number, random: () => number, leak: number): Array<Array<[number, number]>> {
  const rows: Array<Array<[number, number]>> = [];
  for (let r = 0; r < side; r++) {
    for (let c = 0; c < side; c++) {
      const weights = [random() + 0.1, random() + 0.1, random() + 0.1, random() + 0.1];
      const total = weights.reduce((a, b) => a + b, 0) / (1 - leak);
      const row: Array<[number, number]> = [];
      [
        [0, 1],
        [1, 0],
        [0, -1],
        [-1, 0],
      ].forEach(([dr, dc], q) => {
        const rr = r + dr;
        const cc = c + dc;
        const inside = rr >= 0 && rr < side && cc >= 0 && cc < side;
        row.push([inside ? rr * side + cc : r * side + c, weights[q] / total]);
      });
      rows.push(row);
    }
  }
  return rows;
}

function dense(matrix: SparseMatrix): number[][] {
  const out = Array.from({ length: matrix.n }, () => new Array<number>(matrix.n).fill(0));
  for (let i = 0; i < matrix.n; i++)
    for (let e = matrix.rowStart[i]; e < matrix.rowStart[i + 1]; e++) out[i][matrix.column[e]] += matrix.value[e];
  return out;
}

/** mathjs' solver for one matrix, factored once (its LUP decomposition) for every right-hand side. */
function mathjsSolver(matrix: SparseMatrix): (b: Float64Array) => number[] {
  const factored = lup(dense(matrix));
  return (b) => {
    // Given a decomposition, lusolve answers with a mathjs Matrix.
    const solved = lusolve(
      factored,
      Array.from(b, (v) => [v]),
    ) as Matrix | number[][];
    return ((Array.isArray(solved) ? solved : solved.toArray()) as number[][]).map((row) => row[0]);
  };
}

function mathjsSolve(matrix: SparseMatrix, b: Float64Array): number[] {
  return mathjsSolver(matrix)(b);
}

describe('sparse LU against mathjs lusolve', () => {
  for (const [side, discount, leak] of [
    [12, 1, 0.01],
    [20, 0.99, 0],
    [25, 1, 0.002],
  ] as const) {
    it(`${side}x${side} grid walk, discount ${discount}, ending with probability ${leak} per step`, () => {
      const random = rng(side * 31 + 7);
      const matrix = systemOf(gridRows(side, random, leak), discount);
      const factors = sparseFactors(matrix);
      expect(factors).toBeDefined();
      // Fill stays far below a dense factor's n^2 entries.
      expect(factors!.lColumn.length + factors!.uColumn.length).toBeLessThan((matrix.n * matrix.n) / 4);
      const b = Float64Array.from({ length: matrix.n }, () => random() * 2 - 1);
      const x = new Float64Array(matrix.n);
      sparseSolve(factors!, b, x);
      const truth = mathjsSolve(matrix, b);
      const scale = Math.max(...truth.map(Math.abs));
      for (let i = 0; i < matrix.n; i++) expect(Math.abs(x[i] - truth[i])).toBeLessThanOrEqual(1e-9 * scale);
    });
  }

  it('gives up on a random graph, whose separators are large', () => {
    const random = rng(5);
    const n = 3000;
    const rows = Array.from({ length: n }, () =>
      Array.from({ length: 8 }, () => [Math.floor(random() * n), 0.99 / 8] as [number, number]),
    );
    expect(sparseFactors(systemOf(rows, 1))).toBeUndefined();
  });

  it('gives up on a large random graph from its outgoing pattern alone, as the symmetrised search would', () => {
    // Five levels from row 0 already hold more than 6 x 1400 rows, so a symmetrised level past
    // the limit is certain.
    const random = rng(7);
    const n = 40_000;
    const rows = Array.from({ length: n }, () =>
      Array.from({ length: 8 }, () => [Math.floor(random() * n), 0.99 / 8] as [number, number]),
    );
    expect(sparseFactors(systemOf(rows, 1))).toBeUndefined();
  });
});

describe('sparse LU on a walk', () => {
  it('fair walk 0..2000: expected durations i(N - i) (Feller, ch. XIV)', () => {
    // One unknown per inner state 1..N-1 of a fair walk; each step costs 1.
    const N = 2000;
    const rows = Array.from({ length: N - 1 }, (_, i) => {
      const row: Array<[number, number]> = [];
      if (i > 0) row.push([i - 1, 0.5]);
      if (i < N - 2) row.push([i + 1, 0.5]);
      return row;
    });
    const factors = sparseFactors(systemOf(rows, 1));
    expect(factors).toBeDefined();
    const x = new Float64Array(N - 1);
    sparseSolve(factors!, new Float64Array(N - 1).fill(1), x);
    for (const i of [1, 500, 1000, 1999])
      expect(Math.abs(x[i - 1] - i * (N - i))).toBeLessThanOrEqual(1e-9 * i * (N - i));
  });
});

/** Solves `rounds` random right-hand sides and checks each against mathjs, to 1e-8 of the largest entry. */
function expectAnswersOfMathjs(
  solver: BlockSolver,
  matrix: ReturnType<typeof systemOf>,
  random: () => number,
  rounds: number,
): void {
  const x = new Float64Array(matrix.n);
  const reference = mathjsSolver(matrix);
  for (let round = 0; round < rounds; round++) {
    const b = Float64Array.from({ length: matrix.n }, () => random());
    expect(solver.solve(b, x)).toBe(true);
    const truth = reference(b);
    const scale = Math.max(...truth.map(Math.abs));
    for (let i = 0; i < matrix.n; i++) expect(Math.abs(x[i] - truth[i])).toBeLessThanOrEqual(1e-8 * scale);
  }
}

describe('the block solver', () => {
  it('switches a block that keeps BiCGSTAB busy to sparse LU, with the answers of mathjs before and after', () => {
    const random = rng(3);
    const matrix = systemOf(gridRows(20, random, 0.0005), 1);
    const counters = newSolverCounters();
    const solver = new BlockSolver(matrix, counters);
    expectAnswersOfMathjs(solver, matrix, random, 12);
    expect(counters.krylov).toBe(1);
    expect(counters.sparse).toBe(1);
  });

  it('factors a large block at once when told that several solves follow, with the answers of mathjs', () => {
    const random = rng(4);
    const matrix = systemOf(gridRows(20, random, 0.0005), 1);
    const counters = newSolverCounters();
    const solver = new BlockSolver(matrix, counters);
    solver.expectManySolves();
    expectAnswersOfMathjs(solver, matrix, random, 3);
    expect(counters.sparse).toBe(1);
    expect(counters.krylov).toBe(0);
    expect(counters.krylovIterations).toBe(0);
  });

  it('keeps BiCGSTAB for a random chain, with the answers of mathjs', () => {
    const random = rng(11);
    const n = 500;
    const rows = Array.from({ length: n }, () =>
      Array.from({ length: 6 }, () => [Math.floor(random() * n), 0.98 / 6] as [number, number]),
    );
    const matrix = systemOf(rows, 1);
    const counters = newSolverCounters();
    const solver = new BlockSolver(matrix, counters);
    const x = new Float64Array(n);
    const reference = mathjsSolver(matrix);
    for (let round = 0; round < 8; round++) {
      const b = Float64Array.from({ length: n }, () => random());
      expect(solver.solve(b, x)).toBe(true);
      const truth = reference(b);
      for (let i = 0; i < n; i++)
        expect(Math.abs(x[i] - truth[i])).toBeLessThanOrEqual(1e-8 * Math.abs(truth[i]) + 1e-9);
    }
    expect(counters.sparse).toBe(0);
  });
});
