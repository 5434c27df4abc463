/**
 * Maximal end components (MECs): sets of states with choices that a policy can keep forever, with
 * every state reachable from every other. Computed by iterative SCC refinement as in
 * C. Courcoubetis and M. Yannakakis, "The complexity of probabilistic verification", J. ACM 42(4),
 * 1995, and L. de Alfaro, "Formal Verification of Probabilistic Systems", PhD thesis, Stanford,
 * 1997 (Algorithm 3.1): split the graph into SCCs, drop every choice that can leave its SCC, drop
 * states left without choices (and the choices leading into them), and repeat on the SCCs that
 * lost something, until nothing changes.
 */
import type { ModelGraph } from './graph';
import { stronglyConnectedComponents, type SccDecomposition } from './scc';

export interface EndComponentDecomposition {
  count: number;
  /** componentOf[s]: the MEC of s, -1 for states in none. */
  componentOf: Int32Array;
  /** 1 for choices that belong to the MEC of their state (every outcome stays inside it). */
  choiceIn: Uint8Array;
  /** Per MEC, its states (ascending). */
  states: Int32Array[];
  /** Per MEC, its choices (ascending). */
  choices: Int32Array[];
}

/**
 * The MECs of the sub-MDP made of the states in `stateMask` (default: every non-absorbing state)
 * and the choices in `choiceMask` (default: all). Terminal states are never part of one.
 */
export function maximalEndComponents(
  graph: ModelGraph,
  stateMask?: Uint8Array,
  choiceMask?: Uint8Array,
  /** The SCCs of every non-absorbing state under every choice, when the caller has them (saves the first round). */
  knownComponents?: SccDecomposition,
): EndComponentDecomposition {
  const { model, choiceState, predStart, predChoice, absorbing } = graph;
  const n = model.stateCount;
  const { choiceStart, outcomeStart, outcomeTarget, outcomeProb } = model;

  const alive = new Uint8Array(n);
  for (let s = 0; s < n; s++) alive[s] = !absorbing[s] && (!stateMask || stateMask[s]) ? 1 : 0;
  const allowed = new Uint8Array(model.choiceCount);
  const allowedCount = new Int32Array(n);
  for (let c = 0; c < model.choiceCount; c++) {
    const s = choiceState[c];
    if (alive[s] && (!choiceMask || choiceMask[c])) {
      allowed[c] = 1;
      allowedCount[s]++;
    }
  }
  const removalQueue = new Int32Array(n);
  let queueHead = 0;
  let queueTail = 0;
  for (let s = 0; s < n; s++) {
    if (alive[s] && allowedCount[s] === 0) {
      alive[s] = 0;
      removalQueue[queueTail++] = s;
    }
  }

  const componentOf = new Int32Array(n).fill(-1);
  const states: Int32Array[] = [];
  const choices: Int32Array[] = [];
  let dirty = alive.slice();
  let dirtyCount = 0;
  for (let s = 0; s < n; s++) dirtyCount += dirty[s];

  // Removes choices into removed states, and states left without choices, until none is left.
  const propagateRemovals = (lost: Uint8Array, sccOf: Int32Array): void => {
    while (queueHead < queueTail) {
      const t = removalQueue[queueHead++];
      for (let i = predStart[t]; i < predStart[t + 1]; i++) {
        const c = predChoice[i];
        if (!allowed[c]) continue;
        allowed[c] = 0;
        const s = choiceState[c];
        if (sccOf[s] >= 0) lost[sccOf[s]] = 1;
        if (--allowedCount[s] === 0 && alive[s]) {
          alive[s] = 0;
          removalQueue[queueTail++] = s;
        }
      }
    }
  };

  // Choices of states removed before the first round lead nowhere useful; drop them up front.
  propagateRemovals(new Uint8Array(0), new Int32Array(n).fill(-1));
  for (let s = 0; s < n; s++) if (!alive[s]) dirty[s] = 0;

  let firstRound = !stateMask && !choiceMask && queueTail === 0 ? knownComponents : undefined;
  while (dirtyCount > 0) {
    const scc = firstRound ?? stronglyConnectedComponents(model, dirty, allowed);
    firstRound = undefined;
    const sccOf = scc.componentOf;
    const lost = new Uint8Array(scc.count);
    for (let i = 0; i < scc.order.length; i++) {
      const s = scc.order[i];
      const own = sccOf[s];
      for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) {
        if (!allowed[c]) continue;
        let leaves = false;
        for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) {
          if (outcomeProb[k] > 0 && sccOf[outcomeTarget[k]] !== own) {
            leaves = true;
            break;
          }
        }
        if (leaves) {
          allowed[c] = 0;
          lost[own] = 1;
          if (--allowedCount[s] === 0) {
            alive[s] = 0;
            removalQueue[queueTail++] = s;
          }
        }
      }
    }
    propagateRemovals(lost, sccOf);
    const nextDirty = new Uint8Array(n);
    dirtyCount = 0;
    for (let i = 0; i < scc.count; i++) {
      const first = scc.start[i];
      const last = scc.start[i + 1];
      if (lost[i]) {
        for (let j = first; j < last; j++) {
          const s = scc.order[j];
          if (alive[s]) {
            nextDirty[s] = 1;
            dirtyCount++;
          }
        }
        continue;
      }
      // Nothing left this SCC: it is a maximal end component.
      const members = Int32Array.from(scc.order.subarray(first, last)).sort();
      const id = states.length;
      const memberChoices: number[] = [];
      for (const s of members) {
        componentOf[s] = id;
        for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) if (allowed[c]) memberChoices.push(c);
      }
      states.push(members);
      choices.push(Int32Array.from(memberChoices));
    }
    dirty = nextDirty;
  }

  const choiceIn = new Uint8Array(model.choiceCount);
  for (const list of choices) for (const c of list) choiceIn[c] = 1;
  return { count: states.length, componentOf, choiceIn, states, choices };
}
