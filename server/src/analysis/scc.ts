/**
 * Strongly connected components by Tarjan's algorithm (R. Tarjan, "Depth-first search and linear
 * graph algorithms", SIAM J. Computing 1(2), 1972), written iteratively with explicit stacks so
 * that a million-state chain cannot overflow the call stack. Edges are the outcomes of positive
 * probability of the allowed choices, between states inside the mask.
 */
import type { CompiledModel } from '../model/compiled';

export interface SccDecomposition {
  count: number;
  /** componentOf[s]: the component of s; -1 for states outside the mask. */
  componentOf: Int32Array;
  /**
   * The states grouped by component, components in the order Tarjan completes them: each comes
   * after every component it can reach (reverse topological order, successors first).
   */
  order: Int32Array;
  /** Component i holds order[start[i] .. start[i+1]-1]. */
  start: Int32Array;
}

export function stronglyConnectedComponents(
  model: CompiledModel,
  stateMask?: Uint8Array,
  choiceMask?: Uint8Array,
): SccDecomposition {
  const n = model.stateCount;
  const { choiceStart, outcomeStart, outcomeTarget, outcomeProb } = model;
  const index = new Int32Array(n).fill(-1);
  const low = new Int32Array(n);
  const onStack = new Uint8Array(n);
  const componentOf = new Int32Array(n).fill(-1);
  const order = new Int32Array(n);
  const starts: number[] = [0];
  // The Tarjan stack of visited, unassigned states.
  const stack = new Int32Array(n);
  let stackTop = 0;
  // The explicit depth-first call stack: state and its edge cursor (choice, outcome).
  const frameState = new Int32Array(n);
  const frameChoice = new Int32Array(n);
  const frameOutcome = new Int32Array(n);
  let depth = 0;
  let nextIndex = 0;
  let orderFill = 0;
  let count = 0;

  for (let root = 0; root < n; root++) {
    if (index[root] >= 0 || (stateMask && !stateMask[root])) continue;
    // Push root.
    index[root] = low[root] = nextIndex++;
    stack[stackTop++] = root;
    onStack[root] = 1;
    frameState[depth] = root;
    frameChoice[depth] = choiceStart[root];
    frameOutcome[depth] = outcomeStart[choiceStart[root]];
    depth++;

    while (depth > 0) {
      const f = depth - 1;
      const v = frameState[f];
      let c = frameChoice[f];
      let k = frameOutcome[f];
      const lastChoice = choiceStart[v + 1];
      let descended = false;
      while (c < lastChoice) {
        if (choiceMask && !choiceMask[c]) {
          c++;
          k = outcomeStart[c];
          continue;
        }
        if (k >= outcomeStart[c + 1]) {
          c++;
          k = outcomeStart[c];
          continue;
        }
        const t = outcomeTarget[k];
        const p = outcomeProb[k];
        k++;
        if (!(p > 0) || (stateMask && !stateMask[t])) continue;
        if (index[t] < 0) {
          frameChoice[f] = c;
          frameOutcome[f] = k;
          index[t] = low[t] = nextIndex++;
          stack[stackTop++] = t;
          onStack[t] = 1;
          frameState[depth] = t;
          frameChoice[depth] = choiceStart[t];
          frameOutcome[depth] = outcomeStart[choiceStart[t]];
          depth++;
          descended = true;
          break;
        }
        if (onStack[t] && index[t] < low[v]) low[v] = index[t];
      }
      if (descended) continue;
      // Every edge of v is explored.
      if (low[v] === index[v]) {
        let w: number;
        do {
          w = stack[--stackTop];
          onStack[w] = 0;
          componentOf[w] = count;
          order[orderFill++] = w;
        } while (w !== v);
        count++;
        starts.push(orderFill);
      }
      depth--;
      if (depth > 0) {
        const parent = frameState[depth - 1];
        if (low[v] < low[parent]) low[parent] = low[v];
      }
    }
  }
  return { count, componentOf, order: order.subarray(0, orderFill), start: Int32Array.from(starts) };
}

/**
 * Whether component i has a cycle: more than one state, or a state with an allowed choice that
 * can return to it in one step.
 */
export function isCyclicComponent(
  model: CompiledModel,
  scc: SccDecomposition,
  i: number,
  choiceMask?: Uint8Array,
): boolean {
  if (scc.start[i + 1] - scc.start[i] > 1) return true;
  const s = scc.order[scc.start[i]];
  const { choiceStart, outcomeStart, outcomeTarget, outcomeProb } = model;
  for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) {
    if (choiceMask && !choiceMask[c]) continue;
    for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) {
      if (outcomeTarget[k] === s && outcomeProb[k] > 0) return true;
    }
  }
  return false;
}
