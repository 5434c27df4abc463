/**
 * Sweeps visit states in their sweep order (successors first, exit-first inside components), not
 * in the order of the model's arrays. On a large model with scattered transitions every choice of
 * a sweep then starts a new cache line far from the last one: on 100,000 random states with 4
 * actions of 8 outcomes, a sweep took 114 ms in sweep order against 26 ms front to back.
 *
 * solveBoundsInOrder copies the operator once with the swept states renumbered in sweep order
 * (their choices and outcomes laid out one after another, targets renumbered), solves on the copy
 * and maps the bounds back. Only the numbering changes: every state keeps its choices, rewards,
 * probabilities and the allowed set, so the sweeps compute the same numbers in the same order and
 * the certificates of interval-iteration.ts hold unchanged.
 */
import { guessesAt } from './warm-start';
import { solveBounds, type Nodes, type Operator, type SolveOptions, type SolveResult } from './interval-iteration';

/**
 * Below this many outcomes of swept states the arrays fit in the processor's caches, and a copy
 * costs more than it saves.
 */
const COPY_FROM_OUTCOMES = 500_000;

/** Above this many the copy (12 bytes per outcome) would add too much to the analysis' peak memory. */
const COPY_UP_TO_OUTCOMES = 8_000_000;

/** solveBounds on a copy of the operator laid out in sweep order, when the model is large enough for it to pay. */
export function solveBoundsInOrder(
  op: Operator,
  nodes: Nodes,
  bounds: Float64Array,
  options: SolveOptions,
): SolveResult {
  const outcomes = sweptOutcomes(op, nodes);
  if (outcomes < COPY_FROM_OUTCOMES || outcomes > COPY_UP_TO_OUTCOMES || options.acyclic)
    return solveBounds(op, nodes, bounds, options);
  return solveBoundsOnCopy(op, nodes, bounds, options);
}

/** solveBounds on the copy of packInSweepOrder, with the bounds (and the estimate) mapped back to the model's states. */
export function solveBoundsOnCopy(
  op: Operator,
  nodes: Nodes,
  bounds: Float64Array,
  options: SolveOptions,
): SolveResult {
  const packed = packInSweepOrder(op, nodes);
  const { stateOf } = packed;
  const n = stateOf.length;
  const packedBounds = new Float64Array(2 * n);
  for (let s = 0; s < n; s++) {
    packedBounds[2 * s] = bounds[2 * stateOf[s]];
    packedBounds[2 * s + 1] = bounds[2 * stateOf[s] + 1];
  }
  const guess = options.guess ? guessesAt(options.guess, stateOf) : undefined;
  const result = solveBounds(packed.op, packed.nodes, packedBounds, { ...options, guess });
  for (let s = 0; s < n; s++) {
    bounds[2 * stateOf[s]] = packedBounds[2 * s];
    bounds[2 * stateOf[s] + 1] = packedBounds[2 * s + 1];
  }
  if (!result.estimate) return result;
  const estimate = new Float64Array(n);
  for (let s = 0; s < n; s++) estimate[stateOf[s]] = result.estimate[s];
  return { ...result, estimate };
}

/** The outcomes the sweeps read: those of every choice of every swept state. */
function sweptOutcomes(op: Operator, nodes: Nodes): number {
  const { choiceStart, outcomeStart } = op.model;
  let total = 0;
  for (let m = 0; m < nodes.members.length; m++) {
    const s = nodes.members[m];
    total += outcomeStart[choiceStart[s + 1]] - outcomeStart[choiceStart[s]];
  }
  return total;
}

/**
 * The operator and nodes renumbered: the swept states first, in sweep order, then every other
 * state in its own order (those hold fixed values and have no choices in the copy). stateOf[new]
 * is the original state.
 */
export function packInSweepOrder(op: Operator, nodes: Nodes): { op: Operator; nodes: Nodes; stateOf: Int32Array } {
  const { model } = op;
  const n = model.stateCount;
  const { choiceStart, outcomeStart, outcomeTarget, outcomeProb } = model;
  const newOf = new Int32Array(n).fill(-1);
  const stateOf = new Int32Array(n);
  let next = 0;
  for (let m = 0; m < nodes.members.length; m++) {
    const s = nodes.members[m];
    newOf[s] = next;
    stateOf[next++] = s;
  }
  const swept = next;
  for (let s = 0; s < n; s++) {
    if (newOf[s] >= 0) continue;
    newOf[s] = next;
    stateOf[next++] = s;
  }
  let choices = 0;
  let outcomes = 0;
  for (let t = 0; t < swept; t++) {
    const s = stateOf[t];
    choices += choiceStart[s + 1] - choiceStart[s];
    outcomes += outcomeStart[choiceStart[s + 1]] - outcomeStart[choiceStart[s]];
  }
  const packedChoiceStart = new Int32Array(n + 1);
  const packedOutcomeStart = new Int32Array(choices + 1);
  const packedTarget = new Int32Array(outcomes);
  const packedProb = new Float64Array(outcomes);
  const reward = new Float64Array(choices);
  const allowed = op.allowed ? new Uint8Array(choices) : undefined;
  const policy = op.policy ? new Int32Array(n).fill(-1) : undefined;
  let c2 = 0;
  let k2 = 0;
  for (let t = 0; t < swept; t++) {
    const s = stateOf[t];
    packedChoiceStart[t] = c2;
    if (policy && op.policy![s] >= 0) policy[t] = c2 + (op.policy![s] - choiceStart[s]);
    for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) {
      reward[c2] = op.reward[c];
      if (allowed) allowed[c2] = op.allowed![c];
      packedOutcomeStart[c2] = k2;
      for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) {
        packedTarget[k2] = newOf[outcomeTarget[k]];
        packedProb[k2++] = outcomeProb[k];
      }
      c2++;
    }
  }
  packedOutcomeStart[c2] = k2;
  for (let t = swept; t <= n; t++) packedChoiceStart[t] = c2;
  const members = new Int32Array(swept);
  for (let t = 0; t < swept; t++) members[t] = t;
  return {
    op: {
      model: {
        stateCount: n,
        choiceStart: packedChoiceStart,
        outcomeStart: packedOutcomeStart,
        outcomeTarget: packedTarget,
        outcomeProb: packedProb,
      },
      combine: op.combine,
      policy,
      reward,
      discount: op.discount,
      allowed,
    },
    nodes: { count: nodes.count, start: nodes.start, members, stay: nodes.stay },
    stateOf,
  };
}
