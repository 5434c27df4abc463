/**
 * Sparse LU factors of one block of I - discount P, for blocks whose graph has small separators
 * (grids, corridors, walks): every later right-hand side then costs two triangular sweeps instead
 * of a Krylov solve.
 *
 * Order: nested dissection on the symmetrised pattern (A. George, "Nested dissection of a regular
 * finite element mesh", SIAM J. Numer. Anal. 10(2), 1973), with separators taken as the middle
 * level of a breadth-first level structure rooted at a pseudo-peripheral vertex (N. Gibbs, W. Poole
 * and P. Stockmeyer, SIAM J. Numer. Anal. 13(2), 1976; A. George and J. Liu, Computer Solution of
 * Large Sparse Positive Definite Systems, 1981, ch. 8). Factors: row-wise Gaussian elimination
 * (the IKJ form of Y. Saad, Iterative Methods for Sparse Linear Systems, 2nd ed., 2003, Algorithm
 * 10.1, keeping every fill-in) without pivoting, which is stable for these matrices: every Schur
 * complement of a nonsingular M-matrix is again one, so the pivots stay positive (A. Berman and
 * R. Plemmons, Nonnegative Matrices in the Mathematical Sciences, 1994, ch. 6).
 *
 * The factors are not trusted either: a solve is only a guess that the residual certificate of
 * chain-solve.ts judges. Graphs without small separators (random transitions) would fill in
 * almost completely; the separator, fill and work limits below give up early, and the caller
 * keeps its iterative solve.
 */
import type { SparseMatrix } from './sparse-linear';

/** Vertices left in a part when dissection stops (such a part is eliminated in its given order). */
const LEAF_SIZE = 48;

/** A separator larger than this would make a dense Schur complement too costly: give up. */
const SEPARATOR_LIMIT = 700;

/** A breadth-first level larger than this means no small separator (random graphs): give up at once. */
const LEVEL_LIMIT = 2 * SEPARATOR_LIMIT;

/** The factors may hold this many entries per entry of the block, and at most ENTRY_LIMIT overall. */
const FILL_RATIO = 40;
const ENTRY_LIMIT = 8_000_000;

/** Multiply-adds allowed for one factorization. */
const WORK_LIMIT = 150_000_000;

export interface SparseFactors {
  n: number;
  /** perm[i]: the block row eliminated i-th. */
  perm: Int32Array;
  lStart: Int32Array;
  lColumn: Int32Array;
  lValue: Float64Array;
  uStart: Int32Array;
  uColumn: Int32Array;
  uValue: Float64Array;
  diagonal: Float64Array;
  /** Work buffer of one solve. */
  work: Float64Array;
}

/**
 * The factors of `matrix` (rows with sorted, distinct columns), or undefined when the order finds
 * no small separators, the fill or the work passes its limit, or a pivot is not positive.
 */
export function sparseFactors(matrix: SparseMatrix): SparseFactors | undefined {
  const perm = dissectionOrder(matrix);
  if (!perm) return undefined;
  return eliminate(matrix, perm, Math.min(ENTRY_LIMIT, FILL_RATIO * Math.max(matrix.rowStart[matrix.n], 1000)));
}

/** x = A^-1 b with the factors (b and x may be the same array). */
export function sparseSolve(f: SparseFactors, b: Float64Array, x: Float64Array): void {
  const { n, perm, lStart, lColumn, lValue, uStart, uColumn, uValue, diagonal, work } = f;
  for (let i = 0; i < n; i++) {
    let sum = b[perm[i]];
    for (let e = lStart[i]; e < lStart[i + 1]; e++) sum -= lValue[e] * work[lColumn[e]];
    work[i] = sum;
  }
  for (let i = n - 1; i >= 0; i--) {
    let sum = work[i];
    for (let e = uStart[i]; e < uStart[i + 1]; e++) sum -= uValue[e] * work[uColumn[e]];
    work[i] = sum / diagonal[i];
  }
  for (let i = 0; i < n; i++) x[perm[i]] = work[i];
}

/** The symmetrised off-diagonal pattern in CSR form (a pair present both ways appears twice, which the searches tolerate). */
function symmetricPattern(matrix: SparseMatrix): { start: Int32Array; adjacent: Int32Array } {
  const { n, rowStart, column } = matrix;
  const degree = new Int32Array(n + 1);
  for (let i = 0; i < n; i++) {
    for (let e = rowStart[i]; e < rowStart[i + 1]; e++) {
      const j = column[e];
      if (j === i) continue;
      degree[i + 1]++;
      degree[j + 1]++;
    }
  }
  for (let i = 0; i < n; i++) degree[i + 1] += degree[i];
  const fill = degree.slice(0, n);
  const adjacent = new Int32Array(degree[n]);
  for (let i = 0; i < n; i++) {
    for (let e = rowStart[i]; e < rowStart[i + 1]; e++) {
      const j = column[e];
      if (j === i) continue;
      adjacent[fill[i]++] = j;
      adjacent[fill[j]++] = i;
    }
  }
  return { start: degree, adjacent };
}

/**
 * Whether the first search of dissectionOrder (breadth-first from row 0 on the symmetrised
 * pattern) is sure to meet a level wider than LEVEL_LIMIT, seen on the rows' own (outgoing)
 * pattern without building the symmetrised one: every outgoing edge is also a symmetric one, so
 * the ball of radius k around row 0 is at least as large symmetrised, and a ball of more than
 * (k + 1) LEVEL_LIMIT vertices holds a level wider than LEVEL_LIMIT. On random transitions this
 * stops after a few levels, where building the pattern would read every entry twice.
 */
function outgoingBallTooWide(matrix: SparseMatrix): boolean {
  const { n, rowStart, column } = matrix;
  const seen = new Uint8Array(n);
  const queue = new Int32Array(n);
  let head = 0;
  let tail = 0;
  queue[tail++] = 0;
  seen[0] = 1;
  for (let radius = 1; head < tail; radius++) {
    const levelEnd = tail;
    while (head < levelEnd) {
      const v = queue[head++];
      for (let e = rowStart[v]; e < rowStart[v + 1]; e++) {
        const w = column[e];
        if (seen[w]) continue;
        seen[w] = 1;
        queue[tail++] = w;
      }
    }
    if (tail > (radius + 1) * LEVEL_LIMIT) return true;
  }
  return false;
}

/**
 * The nested-dissection order, or undefined when a separator is too large. Parts are processed
 * from a work list; each owns a range of positions, its separator taking the last ones.
 */
function dissectionOrder(matrix: SparseMatrix): Int32Array | undefined {
  const n = matrix.n;
  if (outgoingBallTooWide(matrix)) return undefined;
  const { start, adjacent } = symmetricPattern(matrix);
  const perm = new Int32Array(n);
  // owner[v]: the part v currently belongs to; a separator vertex keeps its last part's id, which no later part has.
  const owner = new Int32Array(n);
  const level = new Int32Array(n);
  const queue = new Int32Array(n);
  const levelStart = new Int32Array(n + 2);
  const inSeparator = new Uint8Array(n);
  const everything = new Int32Array(n);
  for (let i = 0; i < n; i++) everything[i] = i;
  const tasks: Array<{ vertices: Int32Array; at: number }> = [{ vertices: everything, at: 0 }];
  const component = new Int32Array(n);
  let nextId = 0;

  /** Breadth-first levels from `root` within part `id` (left in queue and levelStart): their number, or 0 when one is too large. */
  const levels = (root: number, id: number): number => {
    let head = 0;
    let tail = 0;
    queue[tail++] = root;
    level[root] = 0;
    const stamp = -id - 2;
    owner[root] = stamp;
    let depth = 0;
    levelStart[0] = 0;
    while (head < tail) {
      const v = queue[head++];
      if (level[v] === depth + 1) {
        levelStart[++depth] = head - 1;
        // Every queued vertex is now of this level.
        if (tail - head + 1 > LEVEL_LIMIT) {
          for (let q = 0; q < tail; q++) owner[queue[q]] = id;
          return 0;
        }
      }
      for (let e = start[v]; e < start[v + 1]; e++) {
        const w = adjacent[e];
        if (owner[w] !== id) continue;
        owner[w] = stamp;
        level[w] = level[v] + 1;
        queue[tail++] = w;
      }
    }
    levelStart[depth + 1] = tail;
    // Give the part back its id for the next search.
    for (let q = 0; q < tail; q++) owner[queue[q]] = id;
    return depth + 1;
  };

  while (tasks.length > 0) {
    const { vertices, at } = tasks.pop()!;
    const size = vertices.length;
    if (size <= LEAF_SIZE) {
      perm.set(vertices, at);
      continue;
    }
    const id = nextId++;
    for (let q = 0; q < size; q++) owner[vertices[q]] = id;
    // A pseudo-peripheral root: restart from the last level's first vertex while the depth grows
    // (two restarts find most of the depth; more cost more than the better separator saves).
    let root = vertices[0];
    let depth = levels(root, id);
    for (let round = 0; round < 2 && depth > 0; round++) {
      const far = queue[levelStart[depth - 1]];
      const next = levels(far, id);
      if (next === 0) depth = 0;
      if (next <= depth) {
        if (next > 0) levels(root, id);
        break;
      }
      root = far;
      depth = next;
    }
    if (depth === 0) return undefined;
    if (depth < 3) {
      if (size > SEPARATOR_LIMIT) return undefined;
      perm.set(vertices, at);
      continue;
    }
    // The middle level by count, kept off the first and last level.
    let middle = 1;
    while (middle < depth - 2 && levelStart[middle + 1] < size / 2) middle++;
    let separatorSize = 0;
    for (let q = levelStart[middle]; q < levelStart[middle + 1]; q++) {
      const v = queue[q];
      // A vertex with no neighbour in the next level separates nothing: it stays with the lower side.
      let needed = false;
      for (let e = start[v]; e < start[v + 1] && !needed; e++)
        if (owner[adjacent[e]] === id && level[adjacent[e]] === middle + 1) needed = true;
      if (needed) {
        inSeparator[v] = 1;
        separatorSize++;
      }
    }
    if (separatorSize > SEPARATOR_LIMIT) return undefined;
    const separator = new Int32Array(separatorSize);
    let fill = 0;
    for (let q = levelStart[middle]; q < levelStart[middle + 1]; q++)
      if (inSeparator[queue[q]]) separator[fill++] = queue[q];
    perm.set(separator, at + size - separatorSize);
    for (let q = 0; q < separatorSize; q++) owner[separator[q]] = -1;
    // The rest splits into connected parts, each a new task with its own range.
    let place = at;
    for (let q = 0; q < size; q++) {
      const v = vertices[q];
      if (owner[v] !== id) continue;
      let head = 0;
      let tail = 0;
      component[tail++] = v;
      owner[v] = -1;
      while (head < tail) {
        const u = component[head++];
        for (let e = start[u]; e < start[u + 1]; e++) {
          const w = adjacent[e];
          if (owner[w] !== id) continue;
          owner[w] = -1;
          component[tail++] = w;
        }
      }
      tasks.push({ vertices: component.slice(0, tail), at: place });
      place += tail;
    }
    for (let q = 0; q < separatorSize; q++) inSeparator[separator[q]] = 0;
  }
  return perm;
}

/**
 * Row-wise elimination of P A P^T (P from `perm`), keeping all fill. Each row is scattered into a
 * dense work row; its lower entries are eliminated in increasing column order from a binary heap.
 * The factors grow in arrays that double when full.
 */
function eliminate(matrix: SparseMatrix, perm: Int32Array, entryLimit: number): SparseFactors | undefined {
  const { n, rowStart, column, value } = matrix;
  const inverse = new Int32Array(n);
  for (let i = 0; i < n; i++) inverse[perm[i]] = i;
  let lColumn = new Int32Array(4 * rowStart[n] + 16);
  let lValue = new Float64Array(lColumn.length);
  let uColumn = new Int32Array(4 * rowStart[n] + 16);
  let uValue = new Float64Array(uColumn.length);
  let lLength = 0;
  let uLength = 0;
  const lStart = new Int32Array(n + 1);
  const uStart = new Int32Array(n + 1);
  const diagonal = new Float64Array(n);
  const w = new Float64Array(n);
  const seen = new Int32Array(n).fill(-1);
  const heap = new Int32Array(n);
  const above = new Int32Array(n);
  let work = 0;
  for (let i = 0; i < n; i++) {
    let heapSize = 0;
    let aboveCount = 0;
    seen[i] = i;
    w[i] = 0;
    const row = perm[i];
    for (let e = rowStart[row]; e < rowStart[row + 1]; e++) {
      const j = inverse[column[e]];
      if (seen[j] !== i) {
        seen[j] = i;
        w[j] = 0;
        if (j > i) above[aboveCount++] = j;
        else heapInsert(heap, heapSize++, j);
      }
      w[j] += value[e];
    }
    while (heapSize > 0) {
      const k = heap[0];
      const last = heap[--heapSize];
      let h = 0;
      for (;;) {
        let child = 2 * h + 1;
        if (child >= heapSize) break;
        if (child + 1 < heapSize && heap[child + 1] < heap[child]) child++;
        if (heap[child] >= last) break;
        heap[h] = heap[child];
        h = child;
      }
      heap[h] = last;
      const factor = w[k] / diagonal[k];
      if (factor === 0) continue;
      if (lLength === lColumn.length) {
        lColumn = grownInt(lColumn);
        lValue = grownFloat(lValue);
      }
      lColumn[lLength] = k;
      lValue[lLength++] = factor;
      const uEnd = uStart[k + 1];
      for (let e = uStart[k]; e < uEnd; e++) {
        const j = uColumn[e];
        if (seen[j] !== i) {
          seen[j] = i;
          w[j] = 0;
          if (j > i) above[aboveCount++] = j;
          else heapInsert(heap, heapSize++, j);
        }
        w[j] -= factor * uValue[e];
      }
      work += uEnd - uStart[k];
    }
    const pivot = w[i];
    if (!(pivot > 0) || !Number.isFinite(pivot)) return undefined;
    diagonal[i] = pivot;
    if (uLength + aboveCount > uColumn.length) {
      uColumn = grownInt(uColumn, uLength + aboveCount);
      uValue = grownFloat(uValue, uLength + aboveCount);
    }
    for (let q = 0; q < aboveCount; q++) {
      const j = above[q];
      if (w[j] === 0) continue;
      uColumn[uLength] = j;
      uValue[uLength++] = w[j];
    }
    lStart[i + 1] = lLength;
    uStart[i + 1] = uLength;
    if (lLength + uLength > entryLimit || work > WORK_LIMIT) return undefined;
  }
  return {
    n,
    perm,
    lStart,
    lColumn: lColumn.subarray(0, lLength),
    lValue: lValue.subarray(0, lLength),
    uStart,
    uColumn: uColumn.subarray(0, uLength),
    uValue: uValue.subarray(0, uLength),
    diagonal,
    work: new Float64Array(n),
  };
}

/** Adds j to the min-heap heap[0 .. size-1] (sift up). */
function heapInsert(heap: Int32Array, size: number, j: number): void {
  let h = size;
  while (h > 0 && heap[(h - 1) >> 1] > j) {
    heap[h] = heap[(h - 1) >> 1];
    h = (h - 1) >> 1;
  }
  heap[h] = j;
}

function grownInt(a: Int32Array<ArrayBuffer>, least = 0): Int32Array<ArrayBuffer> {
  const out = new Int32Array(Math.max(2 * a.length, least));
  out.set(a);
  return out;
}

function grownFloat(a: Float64Array<ArrayBuffer>, least = 0): Float64Array<ArrayBuffer> {
  const out = new Float64Array(Math.max(2 * a.length, least));
  out.set(a);
  return out;
}
