/**
 * Best (or worst) values by policy iteration (R. Howard, Dynamic Programming and Markov
 * Processes, 1960; M. Puterman, Markov Decision Processes, 1994, section 6.4 and, for total reward
 * at discount 1, section 7.2 and D. Bertsekas and J. Tsitsiklis, "An analysis of stochastic
 * shortest path problems", Math. Oper. Res. 16(3), 1991), each policy evaluated by a linear solve
 * (chain-solve.ts) on the nodes of the value problem (collapsed end components count as one node
 * that may also stay for 0). At discount 1 it starts from a proper policy: each node takes a
 * choice that moves, with positive probability, towards a node that already has one (an
 * attractor), so every evaluation is a nonsingular system; Howard's improvement keeps it proper.
 *
 * Certificate, in the optimiser's direction (maximise sigma * value): the final policy's certified
 * solve gives l <= V_pi <= V*. An upper vector u = x + rho W is built from the gaps of the
 * choices (W: expected steps, maximised over the choices that tie with the best), and accepted
 * only if one Bellman step checked with rounding gives T(u) <= u, which puts V* <= u: at discount
 * < 1 by the contraction, at discount 1 because on these nodes every policy that never ends loses
 * without bound (the solver's caller establishes it, as for interval iteration), so value
 * iteration from u decreases to V* (Bertsekas and Tsitsiklis 1991).
 */
import type { CompiledModel } from '../model/compiled';
import { approximateSolve, buildLinearSystem, certifiedSolve, type LinearSystem, type RowLayout } from './chain-solve';
import type { ModelGraph } from './graph';
import { COMBINE_MAX, scaledWidth, sweepEstimate, type Nodes, type Operator } from './interval-iteration';
import type { SolverCounters } from './sparse-linear';

/** Howard iterations at most before giving up (in practice a few dozen at the most). */
const MAX_IMPROVEMENTS = 200;

/**
 * Gauss-Seidel sweeps from 0 that pick the first policy when there is no guess: their greedy
 * policy is close to the best one, which spares most improvements and their linear solves
 * (sweeps before policy evaluation, as in modified policy iteration; Puterman 1994, section 6.5).
 */
const WARM_SWEEPS = 50;

export interface PolicyIterationResult {
  /** Per node: the sound bounds, in the problem's own sign. */
  lower: Float64Array;
  upper: Float64Array;
  /** Per node: the final policy's solved values, in the problem's own sign (a later run's guess). */
  estimate: Float64Array;
  /** Linear solves spent. */
  solves: number;
  improvements: number;
  /** Per node: the final policy's choice, or -1 for staying (a later run's first policy, see earlierPolicy). */
  policy: Int32Array;
}

/**
 * Sound bounds for the nodes of a best (COMBINE_MAX) or worst (COMBINE_MIN) value problem whose
 * states outside the nodes all hold 0, or undefined when policy iteration or its certificate does
 * not apply or fails (then the caller sweeps). `guess` (per state, in the problem's sign; NaN:
 * none), e.g. the previous analysis' values, picks the first policy: the greedy one for the
 * guess where every node has a guess and (at discount 1) that policy is proper, else the
 * attractor policy. `earlierPolicy` (per state, see policyByState), the previous analysis' final
 * policy, breaks that greedy policy's ties in place of the attractor: near-tied choices (a grid's
 * worst values) otherwise fall to the attractor's and cost many improvements to win back. The
 * certificate is the same either way.
 */
export function policyIterationBounds(
  graph: ModelGraph,
  op: Operator,
  nodes: Nodes,
  precision: number,
  counters: SolverCounters,
  guess?: Float64Array,
  earlierPolicy?: Float64Array,
): PolicyIterationResult | undefined {
  const model = graph.model;
  const sigma = op.combine === COMBINE_MAX ? 1 : -1;
  const reward = sigma === 1 ? op.reward : op.reward.map((r) => -r);
  const nodeOf = new Int32Array(model.stateCount).fill(-1);
  for (let i = 0; i < nodes.count; i++)
    for (let m = nodes.start[i]; m < nodes.start[i + 1]; m++) nodeOf[nodes.members[m]] = i;
  const allowed = (c: number): boolean => op.allowed === undefined || op.allowed[c] === 1;

  const attractor = attractorPolicy(graph, nodes, nodeOf, allowed, op.discount);
  if (!attractor) return undefined;
  // The first policy: greedy for the sweeps' values and, given a guess, greedy for the guess.
  const greedyFor = (values: Float64Array | undefined, fallback: Int32Array): Int32Array | undefined => {
    if (!values) return undefined;
    const greedy = greedyPolicy(model, nodes, nodeOf, allowed, reward, op.discount, values, fallback);
    return op.discount < 1 || properPolicy(graph, nodes, nodeOf, greedy) ? greedy : undefined;
  };
  const warm = nodeGuess(nodes, guess, sigma);
  // With the earlier policy breaking the guess's ties, its greedy policy starts well; the sweeps'
  // greedy policy is the better start only where those ties would fall to the attractor.
  const warmStart = warm && greedyFor(warm, nodePolicyOf(model, nodes, allowed, earlierPolicy, attractor));
  const swept = warmStart && earlierPolicy ? undefined : nodeGuess(nodes, sweptGuess(op, nodes), sigma);
  const starts = [warmStart, greedyFor(swept, attractor)];
  let solves = 0;
  let improvements = 0;
  const first = firstPolicy(model, nodes, nodeOf, reward, op.discount, counters, starts, warm ?? swept);
  solves += first.solves;
  const policy = first.policy ?? attractor;
  let previous = first.values;
  // The chosen candidate's system and solve serve as the first round's evaluation.
  let evaluated = first.evaluated;
  // A gain that the upper certificate can absorb within an eighth of the precision (rho W, with W
  // at most 1 / (1 - discount) steps) moves no bound enough to pay for a round: rounding noise
  // between near-tied choices otherwise keeps switching them (46 rounds of gains near 1e-13 for the
  // 100x100 grid's worst values at 0.999, 68 -> 25 solves in all). At discount 1 W has no such
  // bound: every gain counts.
  const negligible = op.discount < 1 ? (precision * (1 - op.discount)) / 8 : 0;
  let system: LinearSystem;
  let solved: { x: Float64Array; radius: Float64Array } | undefined;
  // Intermediate policies are evaluated without a certificate, each solve starting from the last
  // policy's values (policy iteration with inexact evaluations; Puterman 1994, section 6.5); the
  // policy that no longer improves is then solved and certified, and if its certified values
  // still improve it, iteration goes on from there.
  for (;;) {
    system = evaluated?.system ?? buildLinearSystem(model, layoutOf(nodes, nodeOf, policy), op.discount, counters);
    const all = new Uint8Array(system.solver.blockCount).fill(1);
    let guess = evaluated?.values;
    evaluated = undefined;
    if (!guess) {
      guess = approximateSolve(system, reward, all, 0, previous);
      solves++;
    }
    if (!guess) return undefined;
    previous = guess;
    if (improve(model, nodes, nodeOf, allowed, reward, op.discount, guess, policy, negligible)) {
      if (++improvements >= MAX_IMPROVEMENTS) return undefined;
      previous = improveBySweeps(graph, nodes, nodeOf, allowed, reward, op.discount, guess, policy, negligible);
      continue;
    }
    solved = certifiedSolve(system, reward, all, 0, guess, precision);
    solves++;
    if (!solved) return undefined;
    if (!improve(model, nodes, nodeOf, allowed, reward, op.discount, solved.x, policy, negligible)) break;
    if (++improvements >= MAX_IMPROVEMENTS) return undefined;
    previous = improveBySweeps(graph, nodes, nodeOf, allowed, reward, op.discount, solved.x, policy, negligible);
  }
  const { x, radius } = solved;
  const upperVector = upperCertificate(graph, nodes, nodeOf, allowed, reward, op.discount, x, policy, system, counters);
  if (!upperVector) return undefined;
  solves += upperVector.solves;
  const lower = new Float64Array(nodes.count);
  const upper = new Float64Array(nodes.count);
  for (let i = 0; i < nodes.count; i++) {
    const low = x[i] - radius[i];
    const high = upperVector.u[i];
    if (!(low <= high) || !(scaledWidth(low, high) <= precision)) return undefined;
    lower[i] = sigma === 1 ? low : -high;
    upper[i] = sigma === 1 ? high : -low;
  }
  return { lower, upper, estimate: x.map((v) => sigma * v), solves, improvements, policy };
}

/**
 * A node policy per state, for the next analysis: a node's choice is written at the state that
 * owns it as its position among that state's choices (which survives edits elsewhere), staying
 * as -1 at every member; NaN elsewhere.
 */
export function policyByState(graph: ModelGraph, nodes: Nodes, policy: Int32Array): Float64Array {
  const model = graph.model;
  const out = new Float64Array(model.stateCount).fill(NaN);
  for (let i = 0; i < nodes.count; i++) {
    const c = policy[i];
    if (c === -1) {
      for (let m = nodes.start[i]; m < nodes.start[i + 1]; m++) out[nodes.members[m]] = -1;
    } else if (c >= 0) {
      const s = graph.choiceState[c];
      out[s] = c - model.choiceStart[s];
    }
  }
  return out;
}

/**
 * The node policy of an earlier analysis (policyByState) in this model: each node takes the
 * recorded choice of one of its members where that choice exists and is allowed (or stays where
 * it may), else the fallback's choice.
 */
function nodePolicyOf(
  model: CompiledModel,
  nodes: Nodes,
  allowed: (c: number) => boolean,
  earlier: Float64Array | undefined,
  fallback: Int32Array,
): Int32Array {
  const policy = Int32Array.from(fallback);
  if (!earlier || earlier.length !== model.stateCount) return policy;
  for (let i = 0; i < nodes.count; i++) {
    for (let m = nodes.start[i]; m < nodes.start[i + 1]; m++) {
      const s = nodes.members[m];
      const recorded = earlier[s];
      if (recorded === -1 && nodes.stay[i]) {
        policy[i] = -1;
        break;
      }
      if (!Number.isInteger(recorded) || recorded < 0) continue;
      const c = model.choiceStart[s] + recorded;
      if (c < model.choiceStart[s + 1] && allowed(c)) {
        policy[i] = c;
        break;
      }
    }
  }
  return policy;
}

/**
 * Of the candidate first policies, the one whose values (one uncertified solve each, from
 * `start` when given) are larger in total, with those values; undefined when there is none. The
 * greedy policy for a previous solution is usually the better start, but where many choices tie
 * (the worst values of a grid, where every way of staying clear of the ends is nearly as long) its
 * ties fall to the attractor's choices, which head for the ends: the sweeps' greedy policy then
 * needed 3 improvements where it needed 49.
 */
function firstPolicy(
  model: CompiledModel,
  nodes: Nodes,
  nodeOf: Int32Array,
  reward: Float64Array,
  discount: number,
  counters: SolverCounters,
  candidates: Array<Int32Array | undefined>,
  start: Float64Array | undefined,
): {
  policy?: Int32Array;
  values?: Float64Array;
  evaluated?: { system: LinearSystem; values: Float64Array };
  solves: number;
} {
  const present = candidates.filter((c): c is Int32Array => c !== undefined);
  if (present.length === 0) return { solves: 0 };
  if (present.length === 1) return { policy: present[0], values: start, solves: 0 };
  let best: { policy: Int32Array; system: LinearSystem; values: Float64Array; total: number } | undefined;
  for (const policy of present) {
    const system = buildLinearSystem(model, layoutOf(nodes, nodeOf, policy), discount, counters);
    const values = approximateSolve(system, reward, new Uint8Array(system.solver.blockCount).fill(1), 0, start);
    if (!values) continue;
    let total = 0;
    for (let i = 0; i < values.length; i++) total += values[i];
    if (!best || total > best.total) best = { policy, system, values, total };
  }
  if (!best) return { policy: present[0], values: start, solves: present.length };
  return {
    policy: best.policy,
    values: best.values,
    evaluated: { system: best.system, values: best.values },
    solves: present.length,
  };
}

/** Values per state after WARM_SWEEPS sweeps from 0, in the problem's sign. */
function sweptGuess(op: Operator, nodes: Nodes): Float64Array {
  const value = new Float64Array(op.model.stateCount);
  for (let k = 0; k < WARM_SWEEPS; k++) sweepEstimate(op, nodes, value);
  return value;
}

/** The guess per node in the optimiser's sign, or undefined unless every node has one. */
function nodeGuess(nodes: Nodes, guess: Float64Array | undefined, sigma: number): Float64Array | undefined {
  if (!guess) return undefined;
  const out = new Float64Array(nodes.count);
  for (let i = 0; i < nodes.count; i++) {
    const v = guess[nodes.members[nodes.start[i]]];
    if (!Number.isFinite(v)) return undefined;
    out[i] = sigma * v;
  }
  return out;
}

/** Per node, a choice (or staying) of the largest value under x; ties keep the choice of `fallback`. */
function greedyPolicy(
  model: CompiledModel,
  nodes: Nodes,
  nodeOf: Int32Array,
  allowed: (c: number) => boolean,
  reward: Float64Array,
  discount: number,
  x: Float64Array,
  fallback: Int32Array,
): Int32Array {
  const policy = Int32Array.from(fallback);
  for (let i = 0; i < nodes.count; i++) {
    let best = policy[i] < 0 ? 0 : choiceValue(model, nodeOf, reward, discount, x, policy[i]);
    const tolerance = 1e-13 * Math.max(1, Math.abs(best));
    if (nodes.stay[i] && 0 > best + tolerance) {
      best = 0;
      policy[i] = -1;
    }
    for (let m = nodes.start[i]; m < nodes.start[i + 1]; m++) {
      const s = nodes.members[m];
      for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
        if (c === policy[i] || !allowed(c)) continue;
        const q = choiceValue(model, nodeOf, reward, discount, x, c);
        if (q > best + tolerance) {
          best = q;
          policy[i] = c;
        }
      }
    }
  }
  return policy;
}

/**
 * Whether the node policy ends the episode (or stays for 0) with probability 1 from every node:
 * in a finite chain that holds exactly when every node can reach, under the policy, a state
 * outside the nodes or a node that stays. A breadth-first search backwards decides it.
 */
function properPolicy(graph: ModelGraph, nodes: Nodes, nodeOf: Int32Array, policy: Int32Array): boolean {
  const model = graph.model;
  const covered = new Uint8Array(nodes.count);
  const queue = new Int32Array(model.stateCount);
  let head = 0;
  let tail = 0;
  for (let s = 0; s < model.stateCount; s++) if (nodeOf[s] < 0) queue[tail++] = s;
  const cover = (i: number): void => {
    covered[i] = 1;
    for (let m = nodes.start[i]; m < nodes.start[i + 1]; m++) queue[tail++] = nodes.members[m];
  };
  for (let i = 0; i < nodes.count; i++) if (policy[i] === -1) cover(i);
  while (head < tail) {
    const t = queue[head++];
    for (let p = graph.predStart[t]; p < graph.predStart[t + 1]; p++) {
      const c = graph.predChoice[p];
      const i = nodeOf[graph.choiceState[c]];
      if (i < 0 || covered[i] || policy[i] !== c || nodeOf[t] === i) continue;
      cover(i);
    }
  }
  for (let i = 0; i < nodes.count; i++) if (!covered[i]) return false;
  return true;
}

/** The rows of a node policy (as it is now): node i's row uses its policy's choice, or none for "stay" (-1). */
function layoutOf(nodes: Nodes, nodeOf: Int32Array, policy: Int32Array): RowLayout {
  const first = new Int32Array(nodes.count);
  const end = new Int32Array(nodes.count);
  for (let row = 0; row < nodes.count; row++) {
    if (policy[row] < 0) continue;
    first[row] = policy[row];
    end[row] = policy[row] + 1;
  }
  return { rows: nodes.count, rowOf: nodeOf, first, end };
}

/**
 * A policy that ends the episode (or stays for 0) with probability 1 from every node: a
 * breadth-first search backwards from the states outside the nodes and the nodes that may stay,
 * each node taking the first choice found that leads, with positive probability, to a state
 * already covered. At discount < 1 any choice will do for a node the search misses; at discount 1
 * such a node has no proper policy and undefined is returned.
 */
function attractorPolicy(
  graph: ModelGraph,
  nodes: Nodes,
  nodeOf: Int32Array,
  allowed: (c: number) => boolean,
  discount: number,
): Int32Array | undefined {
  const model = graph.model;
  const policy = new Int32Array(nodes.count).fill(-2);
  const queue = new Int32Array(model.stateCount);
  let head = 0;
  let tail = 0;
  for (let s = 0; s < model.stateCount; s++) if (nodeOf[s] < 0) queue[tail++] = s;
  const cover = (i: number, choice: number): void => {
    policy[i] = choice;
    for (let m = nodes.start[i]; m < nodes.start[i + 1]; m++) queue[tail++] = nodes.members[m];
  };
  for (let i = 0; i < nodes.count; i++) if (nodes.stay[i]) cover(i, -1);
  while (head < tail) {
    const t = queue[head++];
    for (let p = graph.predStart[t]; p < graph.predStart[t + 1]; p++) {
      const c = graph.predChoice[p];
      const i = nodeOf[graph.choiceState[c]];
      if (i < 0 || policy[i] !== -2 || nodeOf[t] === i || !allowed(c)) continue;
      cover(i, c);
    }
  }
  for (let i = 0; i < nodes.count; i++) {
    if (policy[i] !== -2) continue;
    if (discount === 1) return undefined;
    const s = nodes.members[nodes.start[i]];
    for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1] && policy[i] === -2; c++)
      if (allowed(c)) policy[i] = c;
    if (policy[i] === -2) return undefined;
  }
  return policy;
}

/** Q of choice c under node values x (states outside the nodes hold 0). */
function choiceValue(
  model: CompiledModel,
  nodeOf: Int32Array,
  reward: Float64Array,
  discount: number,
  x: Float64Array,
  c: number,
): number {
  let acc = 0;
  for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
    const j = nodeOf[model.outcomeTarget[k]];
    if (j >= 0) acc += model.outcomeProb[k] * x[j];
  }
  return reward[c] + discount * acc;
}

/**
 * Howard's improvement step: each node switches to a choice (or to staying) whose value beats its
 * current one by more than the rounding of the evaluation and more than `negligible` (absolute);
 * returns whether any node switched.
 */
function improve(
  model: CompiledModel,
  nodes: Nodes,
  nodeOf: Int32Array,
  allowed: (c: number) => boolean,
  reward: Float64Array,
  discount: number,
  x: Float64Array,
  policy: Int32Array,
  negligible: number,
): boolean {
  let changed = false;
  for (let i = 0; i < nodes.count; i++) {
    const tolerance = Math.max(negligible, 1e-13 * Math.max(1, Math.abs(x[i])));
    let best = x[i] + tolerance;
    let bestChoice = policy[i];
    if (nodes.stay[i] && 0 > best) {
      best = 0;
      bestChoice = -1;
    }
    for (let m = nodes.start[i]; m < nodes.start[i + 1]; m++) {
      const s = nodes.members[m];
      for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
        if (c === policy[i] || !allowed(c)) continue;
        const q = choiceValue(model, nodeOf, reward, discount, x, c);
        if (q > best) {
          best = q;
          bestChoice = c;
        }
      }
    }
    if (bestChoice !== policy[i]) {
      policy[i] = bestChoice;
      changed = true;
    }
  }
  return changed;
}

/** Gauss-Seidel improvement sweeps after each Howard step (see improveBySweeps): forward, backward, twice. */
const IMPROVING_SWEEPS = 4;

/**
 * After Howard's step, Gauss-Seidel sweeps over the nodes, alternately forward and backward, in
 * which each node takes the best of its choices (or staying) for the values as they are updated in
 * place, and its value becomes that choice's; returns those values, the next evaluation's start.
 * Howard's step moves a change one neighbour per round where many choices nearly tie (the worst
 * values of the 100x100 grid after one reward edit: 47 rounds); a sweep carries it across the
 * model. The policy stays a sound candidate: a node's value is its choice's value under values no
 * larger than the final ones, so T_pi'(x') >= x', hence V_pi' >= x' (the monotonicity behind
 * policy improvement; Puterman 1994, sections 6.3.3 on Gauss-Seidel and 6.4.2), and the loop's
 * own evaluation, improvement check and certificate decide as before. At discount 1 a policy that
 * is not proper (possible only through rounding) is replaced by Howard's.
 */
function improveBySweeps(
  graph: ModelGraph,
  nodes: Nodes,
  nodeOf: Int32Array,
  allowed: (c: number) => boolean,
  reward: Float64Array,
  discount: number,
  x: Float64Array,
  policy: Int32Array,
  negligible: number,
): Float64Array {
  const model = graph.model;
  const howard = Int32Array.from(policy);
  const value = Float64Array.from(x);
  for (let sweep = 0; sweep < IMPROVING_SWEEPS; sweep++) {
    const forward = sweep % 2 === 0;
    for (let k = 0; k < nodes.count; k++) {
      const i = forward ? k : nodes.count - 1 - k;
      let current = policy[i] < 0 ? 0 : choiceValue(model, nodeOf, reward, discount, value, policy[i]);
      const tolerance = Math.max(negligible, 1e-13 * Math.max(1, Math.abs(current)));
      let best = current + tolerance;
      let bestChoice = policy[i];
      if (nodes.stay[i] && 0 > best) {
        best = 0;
        bestChoice = -1;
      }
      for (let m = nodes.start[i]; m < nodes.start[i + 1]; m++) {
        const s = nodes.members[m];
        for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
          if (c === policy[i] || !allowed(c)) continue;
          const q = choiceValue(model, nodeOf, reward, discount, value, c);
          if (q > best) {
            best = q;
            bestChoice = c;
          }
        }
      }
      if (bestChoice !== policy[i]) {
        policy[i] = bestChoice;
        current = bestChoice < 0 ? 0 : best;
      }
      value[i] = current;
    }
  }
  if (discount >= 1 && !properPolicy(graph, nodes, nodeOf, policy)) {
    policy.set(howard);
    return x;
  }
  return value;
}

/**
 * An upper vector u >= x with T(u) <= u checked with rounding, or undefined. With gap g(c) =
 * x_i - Q_x(c) >= -rho for every choice, u = x + rho W satisfies T(u) <= u if W >= 1 + discount
 * P_c W for the choices that (nearly) tie and rho (discount P_c W - W_i) <= g(c) for the others;
 * W is the expected number of steps under the longest policy among the tying choices, found by
 * policy iteration on that length, and choices that break the second condition join the tying ones.
 */
function upperCertificate(
  graph: ModelGraph,
  nodes: Nodes,
  nodeOf: Int32Array,
  allowed: (c: number) => boolean,
  reward: Float64Array,
  discount: number,
  x: Float64Array,
  policy: Int32Array,
  policySystem: LinearSystem,
  counters: SolverCounters,
): { u: Float64Array; solves: number } | undefined {
  const model = graph.model;
  const { choiceStart } = model;
  // Gaps of every allowed choice, and rho from the largest excess over x (with its rounding).
  const gap = new Float64Array(model.choiceCount).fill(Infinity);
  let rho = 0;
  for (let i = 0; i < nodes.count; i++) {
    for (let m = nodes.start[i]; m < nodes.start[i + 1]; m++) {
      const s = nodes.members[m];
      for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) {
        if (!allowed(c)) continue;
        const q = choiceValue(model, nodeOf, reward, discount, x, c);
        gap[c] = x[i] - q;
        // The rounding of q and of the difference: a few units in the last place of the terms.
        const terms = model.outcomeStart[c + 1] - model.outcomeStart[c] + 3;
        const excess = q - x[i] + 2 * terms * Number.EPSILON * (Math.abs(x[i]) + Math.abs(q) + Math.abs(reward[c]));
        if (excess > rho) rho = excess;
      }
    }
    if (nodes.stay[i] && -x[i] > rho) rho = -x[i];
  }
  rho = rho * 2 + Number.MIN_VALUE;
  const tying = new Uint8Array(model.choiceCount);
  for (let c = 0; c < model.choiceCount; c++) {
    const i = nodeOf[graph.choiceState[c]];
    if (i >= 0 && gap[c] <= 1e-9 * Math.max(1, Math.abs(x[i]))) tying[c] = 1;
  }
  const lengthReward = new Float64Array(model.choiceCount).fill(1);
  const longest = Int32Array.from(policy);
  let solves = 0;
  for (let round = 0; round < 4; round++) {
    // The longest policy among the tying choices, by policy iteration on the expected length.
    let length: Float64Array | undefined;
    for (let step = 0; step < 30; step++) {
      // The final policy's system serves while the longest policy is that policy.
      const system = samePolicy(longest, policy)
        ? policySystem
        : buildLinearSystem(model, layoutOf(nodes, nodeOf, longest), discount, counters);
      // A node that stays counts one step for it, as the choice "stay" does in T. The lengths need
      // no certificate: the checks below read W's property off the model's coefficients.
      length = approximateSolve(system, lengthReward, new Uint8Array(system.solver.blockCount).fill(1), 1);
      solves++;
      if (!length) return undefined;
      let changed = false;
      for (let i = 0; i < nodes.count; i++) {
        let best = length[i] * (1 + 1e-9);
        for (let m = nodes.start[i]; m < nodes.start[i + 1]; m++) {
          const s = nodes.members[m];
          for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) {
            if (!tying[c] || c === longest[i]) continue;
            const q = choiceValue(model, nodeOf, lengthReward, discount, length, c);
            if (q > best) {
              best = q;
              longest[i] = c;
              changed = true;
            }
          }
        }
      }
      if (!changed) break;
    }
    if (!length) return undefined;
    // Scale W until W_i - discount P_c W >= 1 for every tying choice (and a stay node's 1).
    let scale = 1;
    for (let i = 0; i < nodes.count; i++) {
      if (nodes.stay[i]) {
        if (!(length[i] > 0)) return undefined;
        scale = Math.max(scale, 1 / (length[i] * (1 - 64 * Number.EPSILON)));
      }
      for (let m = nodes.start[i]; m < nodes.start[i + 1]; m++) {
        const s = nodes.members[m];
        for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) {
          if (!tying[c]) continue;
          const room =
            length[i] -
            (choiceValue(model, nodeOf, lengthReward, discount, length, c) - 1) -
            64 * Number.EPSILON * length[i];
          if (!(room > 0)) return undefined;
          if (1 / room > scale) scale = 1 / room;
        }
      }
    }
    const weight = length.map((w) => w * scale * (1 + 1e-9));
    // The other choices must absorb rho times their growth of W.
    let joined = false;
    for (let i = 0; i < nodes.count; i++) {
      for (let m = nodes.start[i]; m < nodes.start[i + 1]; m++) {
        const s = nodes.members[m];
        for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) {
          if (tying[c] || !allowed(c)) continue;
          const growth = choiceValue(model, nodeOf, lengthReward, discount, weight, c) - 1 - weight[i];
          if (growth > 0 && rho * growth * 2 > gap[c]) {
            tying[c] = 1;
            joined = true;
          }
        }
      }
    }
    if (joined) continue;
    const u = new Float64Array(nodes.count);
    for (let i = 0; i < nodes.count; i++) u[i] = x[i] + rho * weight[i];
    return checkUpper(model, nodes, nodeOf, allowed, reward, discount, u) ? { u, solves } : undefined;
  }
  return undefined;
}

function samePolicy(a: Int32Array, b: Int32Array): boolean {
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}

/** T(u) <= u on every node, each choice's value computed with a bound on its rounding. */
function checkUpper(
  model: CompiledModel,
  nodes: Nodes,
  nodeOf: Int32Array,
  allowed: (c: number) => boolean,
  reward: Float64Array,
  discount: number,
  u: Float64Array,
): boolean {
  const { choiceStart, outcomeStart, outcomeTarget, outcomeProb } = model;
  for (let i = 0; i < nodes.count; i++) {
    if (nodes.stay[i] && !(u[i] >= 0)) return false;
    for (let m = nodes.start[i]; m < nodes.start[i + 1]; m++) {
      const s = nodes.members[m];
      for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) {
        if (!allowed(c)) continue;
        let acc = 0;
        let magnitude = 0;
        let terms = 2;
        for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) {
          const j = nodeOf[outcomeTarget[k]];
          if (j < 0) continue;
          const term = outcomeProb[k] * u[j];
          acc += term;
          magnitude += Math.abs(term);
          terms++;
        }
        const q = reward[c] + discount * acc;
        const rounding = (2 * terms + 4) * Number.EPSILON * (Math.abs(reward[c]) + magnitude);
        if (!(q + rounding <= u[i])) return false;
      }
    }
  }
  return true;
}
