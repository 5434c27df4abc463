/**
 * Shaping checks. Reward terms marked `shaping: true` leave the optimal policy alone exactly when they
 * are potential-based: F(s, a, s') = discount * Phi(s') - Phi(s) for some Phi over states (Ng, Harada
 * and Russell, 1999, "Policy invariance under reward transformations", Theorem 1), with Phi = 0 on
 * terminals in episodic tasks (Grzes, 2017, "Reward shaping in episodic reinforcement learning").
 *
 * Deciding whether such a Phi exists is a consistency problem over the transition graph: every
 * outcome (s -> s') with positive probability is one linear equation discount*Phi(s') - Phi(s) = F.
 * Each equation ties two unknowns, so per weakly connected component one unknown fixes all others
 * along a spanning tree and every remaining edge is a check. Terminals are merged into one node
 * "episode end" with Phi = 0 (the episodic convention: a potential on a terminal is never cancelled by
 * a later step, which is what terminal-potential reports). With discount < 1 a component without a
 * terminal contains a directed cycle, and going once around a cycle v0 -> ... -> vL = v0 gives
 * (discount^L - 1) * Phi(v0) = sum_i discount^i * F_i, which fixes Phi(v0). With discount 1 a
 * component without a terminal leaves Phi free up to a constant (0 is chosen at its first state).
 * With discount 0, F = -Phi(s), so all outcomes leaving one state must carry the same amount.
 */
import type { CompiledModel } from '../model/compiled';
import type { ParsedSpec } from '../load/types';

/** One outcome seen as an equation discount*Phi(to) - Phi(from) = amount. */
export interface ShapingStep {
  choice: number;
  outcome: number;
  from: number;
  /** The model state entered (a terminal is a real state here, although all terminals share Phi = 0). */
  to: number;
  amount: number;
  /** True when the derivation goes from `from` to `to`, false when it goes against the transition. */
  forward: boolean;
}

/** How one value of Phi at a state was derived: the outcomes followed from the anchor to the state. */
export interface PotentialDerivation {
  value: number;
  steps: ShapingStep[];
}

/** What fixed the potential of the component in which a contradiction was found. */
export type PotentialAnchor =
  | { kind: 'terminal' }
  | { kind: 'loop'; state: number; value: number; steps: ShapingStep[] }
  | { kind: 'free'; state: number };

/**
 * Two derivations that give `state` different potentials. With discount 1 the two derivations form
 * a cycle and `net` is the sum of the shaping around it (a potential-based term sums to 0 around every
 * cycle).
 */
export interface PotentialConflict {
  state: number;
  first: PotentialDerivation;
  second: PotentialDerivation;
  anchor: PotentialAnchor;
  net?: number;
}

export interface PotentialRecovery {
  /** The names of the terms marked `shaping: true` that the model carries. */
  shapingTerms: string[];
  /** Per outcome, the sum of the shaping terms. */
  amounts: Float64Array;
  /** A potential per state (0 on terminals) that reproduces every shaping amount; absent on a conflict. */
  potential?: Float64Array;
  conflict?: PotentialConflict;
  /** How many outcomes disagree with the potential found along the spanning trees (0 without a conflict). */
  inconsistentOutcomes: number;
}

/** Indices into model.termNames of the terms the spec marks `shaping: true`. */
export function shapingTermIndices(spec: ParsedSpec, model: CompiledModel): number[] {
  const marked = new Set(spec.rewardTerms.filter((t) => t.shaping).map((t) => t.name));
  const indices: number[] = [];
  model.termNames.forEach((name, i) => {
    if (marked.has(name)) indices.push(i);
  });
  return indices;
}

/** Per outcome, the part of the reward that comes from the given terms. */
export function termRewardSum(model: CompiledModel, termIndices: readonly number[]): Float64Array {
  const sum = new Float64Array(model.outcomeCount);
  for (const t of termIndices) {
    const part = model.outcomeTermReward[t];
    for (let k = 0; k < model.outcomeCount; k++) sum[k] += part[k];
  }
  return sum;
}

/**
 * The reward of each outcome without any shaping: minus the terms marked `shaping` and minus the
 * `shaping.potential` reward. Policies optimal for this reward are what the shaping must preserve.
 */
export function unshapedReward(spec: ParsedSpec, model: CompiledModel): Float64Array {
  const reward = Float64Array.from(model.outcomeReward);
  const shaping = termRewardSum(model, shapingTermIndices(spec, model));
  for (let k = 0; k < model.outcomeCount; k++) {
    reward[k] -= shaping[k] + (model.outcomePotentialReward?.[k] ?? 0);
  }
  return reward;
}

/** Whether the spec has anything that shapes the reward (marked terms or a potential). */
export function hasShaping(spec: ParsedSpec, model: CompiledModel): boolean {
  return shapingTermIndices(spec, model).length > 0 || model.outcomePotentialReward !== undefined;
}

/**
 * Decides whether the terms marked `shaping` are discount*Phi(s') - Phi(s) for some Phi with Phi = 0 on
 * terminals, and recovers Phi when they are. `tolerance` is relative to the largest shaping amount
 * or potential in magnitude (at least 1): amounts are decimal numbers stored in binary, so equality
 * can only hold up to rounding.
 */
export function recoverPotential(spec: ParsedSpec, model: CompiledModel, tolerance = 1e-9): PotentialRecovery {
  const indices = shapingTermIndices(spec, model);
  const amounts = termRewardSum(model, indices);
  const recovery = solvePotential(model, amounts, tolerance);
  return { shapingTerms: indices.map((i) => model.termNames[i]), amounts, ...recovery };
}

/** The consistency check on explicit per-outcome amounts (exported for tests). */
export function solvePotential(
  model: CompiledModel,
  amounts: Float64Array,
  tolerance = 1e-9,
): { potential?: Float64Array; conflict?: PotentialConflict; inconsistentOutcomes: number } {
  const graph = buildGraph(model, amounts);
  if (model.discount === 0) return solveMyopic(model, graph, tolerance);
  return new TreeSolver(model, graph, tolerance).solve();
}

/** The equations as a graph: node n is "episode end" (every terminal), edges are outcomes. */
interface ShapingGraph {
  end: number;
  edgeFrom: Int32Array;
  edgeTo: Int32Array;
  edgeChoice: Int32Array;
  edgeOutcome: Int32Array;
  edgeAmount: Float64Array;
  /** CSR of the edges incident to each node, in both directions. */
  incidentStart: Int32Array;
  incident: Int32Array;
  scale: number;
}

function buildGraph(model: CompiledModel, amounts: Float64Array): ShapingGraph {
  const end = model.stateCount;
  const from: number[] = [];
  const to: number[] = [];
  const choices: number[] = [];
  const outcomes: number[] = [];
  const amount: number[] = [];
  let scale = 1;
  for (let s = 0; s < model.stateCount; s++) {
    if (model.terminal[s] !== 0) continue;
    for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
      for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
        if (!(model.outcomeProb[k] > 0)) continue;
        const t = model.outcomeTarget[k];
        from.push(s);
        to.push(model.terminal[t] !== 0 ? end : t);
        choices.push(c);
        outcomes.push(k);
        amount.push(amounts[k]);
        scale = Math.max(scale, Math.abs(amounts[k]));
      }
    }
  }
  const edgeCount = from.length;
  const degree = new Int32Array(end + 2);
  for (let e = 0; e < edgeCount; e++) {
    degree[from[e] + 1]++;
    if (to[e] !== from[e]) degree[to[e] + 1]++;
  }
  for (let v = 0; v <= end; v++) degree[v + 1] += degree[v];
  const incidentStart = degree.slice();
  const fill = degree.slice(0, end + 1);
  const incident = new Int32Array(incidentStart[end + 1]);
  for (let e = 0; e < edgeCount; e++) {
    incident[fill[from[e]]++] = e;
    if (to[e] !== from[e]) incident[fill[to[e]]++] = e;
  }
  return {
    end,
    edgeFrom: Int32Array.from(from),
    edgeTo: Int32Array.from(to),
    edgeChoice: Int32Array.from(choices),
    edgeOutcome: Int32Array.from(outcomes),
    edgeAmount: Float64Array.from(amount),
    incidentStart,
    incident,
    scale,
  };
}

function stepOf(model: CompiledModel, graph: ShapingGraph, edge: number, forward: boolean): ShapingStep {
  const outcome = graph.edgeOutcome[edge];
  return {
    choice: graph.edgeChoice[edge],
    outcome,
    from: graph.edgeFrom[edge],
    to: model.outcomeTarget[outcome],
    amount: graph.edgeAmount[edge],
    forward,
  };
}

/** Discount 0: F(s, a, s') = -Phi(s), so every outcome leaving s must carry the same amount. */
function solveMyopic(
  model: CompiledModel,
  graph: ShapingGraph,
  tolerance: number,
): { potential?: Float64Array; conflict?: PotentialConflict; inconsistentOutcomes: number } {
  const potential = new Float64Array(model.stateCount);
  const firstEdge = new Int32Array(model.stateCount).fill(-1);
  let conflict: PotentialConflict | undefined;
  let inconsistent = 0;
  for (let e = 0; e < graph.edgeFrom.length; e++) {
    const s = graph.edgeFrom[e];
    if (firstEdge[s] < 0) {
      firstEdge[s] = e;
      potential[s] = -graph.edgeAmount[e];
      continue;
    }
    if (Math.abs(graph.edgeAmount[e] + potential[s]) <= tolerance * graph.scale) continue;
    inconsistent++;
    conflict ??= {
      state: s,
      first: { value: potential[s], steps: [stepOf(model, graph, firstEdge[s], false)] },
      second: { value: -graph.edgeAmount[e], steps: [stepOf(model, graph, e, false)] },
      anchor: { kind: 'terminal' },
    };
  }
  return conflict ? { conflict, inconsistentOutcomes: inconsistent } : { potential, inconsistentOutcomes: 0 };
}

/**
 * The spanning-tree solver for discount > 0. Trees are grown by 0-1 breadth-first search in which
 * deriving Phi(s) = discount*Phi(s') - F (against the transition) costs 0 and deriving
 * Phi(s') = (Phi(s) + F) / discount (along it) costs 1, so values are propagated with as few divisions
 * by the discount as possible and rounding errors stay small.
 */
class TreeSolver {
  private readonly nodeCount: number;
  private readonly value: Float64Array;
  private readonly component: Int32Array;
  private readonly parentEdge: Int32Array;
  private readonly divisions: Int32Array;
  private readonly settled: Uint8Array;
  private readonly anchors: PotentialAnchor[] = [];
  /** One deque for every tree: each incidence relaxes at most once, so this is enough room on both sides. */
  private readonly deque: Int32Array;

  constructor(
    private readonly model: CompiledModel,
    private readonly graph: ShapingGraph,
    private readonly tolerance: number,
  ) {
    this.nodeCount = graph.end + 1;
    this.value = new Float64Array(this.nodeCount);
    this.component = new Int32Array(this.nodeCount).fill(-1);
    this.parentEdge = new Int32Array(this.nodeCount).fill(-1);
    this.divisions = new Int32Array(this.nodeCount).fill(0x7fffffff);
    this.settled = new Uint8Array(this.nodeCount);
    this.deque = new Int32Array(2 * (graph.incident.length + 2));
  }

  solve(): { potential?: Float64Array; conflict?: PotentialConflict; inconsistentOutcomes: number } {
    const { graph } = this;
    this.growTree(graph.end, 0, { kind: 'terminal' });
    for (let v = 0; v < graph.end; v++) {
      if (this.component[v] !== -1 || this.model.terminal[v] !== 0) continue;
      if (graph.incidentStart[v + 1] === graph.incidentStart[v]) {
        // A state with no equations (it never acts and is never entered): any Phi works.
        this.component[v] = this.anchors.length;
        this.anchors.push({ kind: 'free', state: v });
        this.settled[v] = 1;
        continue;
      }
      if (this.model.discount === 1) this.growTree(v, 0, { kind: 'free', state: v });
      else {
        const loop = this.loopFrom(v);
        this.growTree(loop.state, loop.value, loop);
      }
    }
    return this.check();
  }

  /** Follows the first outgoing equation from `start` until a state repeats; the repeat closes a directed cycle. */
  private loopFrom(start: number): PotentialAnchor & { kind: 'loop' } {
    const { graph, model } = this;
    const position = new Map<number, number>();
    const edges: number[] = [];
    let v = start;
    while (!position.has(v)) {
      position.set(v, edges.length);
      // Every non-terminal state has an outcome; none of them reaches "episode end" here, because the
      // tree grown from the end would already hold this component.
      const e = this.firstOutgoing(v);
      edges.push(e);
      v = graph.edgeTo[e];
    }
    const cycle = edges.slice(position.get(v));
    const discount = model.discount;
    let weighted = 0;
    let power = 1;
    for (const e of cycle) {
      weighted += power * graph.edgeAmount[e];
      power *= discount;
    }
    const value = weighted / (power - 1);
    return { kind: 'loop', state: v, value, steps: cycle.map((e) => stepOf(model, graph, e, true)) };
  }

  private firstOutgoing(v: number): number {
    const { graph } = this;
    for (let i = graph.incidentStart[v]; i < graph.incidentStart[v + 1]; i++) {
      const e = graph.incident[i];
      if (graph.edgeFrom[e] === v) return e;
    }
    throw new Error(`state ${v} has no outcome`);
  }

  private growTree(root: number, rootValue: number, anchor: PotentialAnchor): void {
    const { graph, model } = this;
    const id = this.anchors.length;
    this.anchors.push(anchor);
    const discount = model.discount;
    // 0-cost relaxations go to the front of the deque, 1-cost ones to the back.
    const deque = this.deque;
    let head = deque.length >> 1;
    let tail = head;
    this.divisions[root] = 0;
    this.component[root] = id;
    this.value[root] = rootValue;
    deque[tail++] = root;
    while (head < tail) {
      const u = deque[head++];
      if (this.settled[u]) continue;
      this.settled[u] = 1;
      const parent = this.parentEdge[u];
      if (parent >= 0) {
        // Parents settle before children, so the parent's value is final here.
        const p = graph.edgeFrom[parent] === u ? graph.edgeTo[parent] : graph.edgeFrom[parent];
        this.value[u] =
          graph.edgeFrom[parent] === u
            ? discount * this.value[p] - graph.edgeAmount[parent]
            : (this.value[p] + graph.edgeAmount[parent]) / discount;
      }
      for (let i = graph.incidentStart[u]; i < graph.incidentStart[u + 1]; i++) {
        const e = graph.incident[i];
        const along = graph.edgeFrom[e] === u;
        const w = along ? graph.edgeTo[e] : graph.edgeFrom[e];
        if (w === u || this.settled[w]) continue;
        const cost = this.divisions[u] + (along ? 1 : 0);
        if (cost >= this.divisions[w]) continue;
        this.divisions[w] = cost;
        this.parentEdge[w] = e;
        this.component[w] = id;
        if (along) deque[tail++] = w;
        else deque[--head] = w;
      }
    }
  }

  private check(): { potential?: Float64Array; conflict?: PotentialConflict; inconsistentOutcomes: number } {
    const { graph, model, value } = this;
    let worst = -1;
    let worstResidual = 0;
    let worstLength = Infinity;
    let inconsistent = 0;
    for (let e = 0; e < graph.edgeFrom.length; e++) {
      const from = value[graph.edgeFrom[e]];
      const to = value[graph.edgeTo[e]];
      const residual = model.discount * to - from - graph.edgeAmount[e];
      const limit = this.tolerance * Math.max(graph.scale, Math.abs(from), Math.abs(to));
      if (Math.abs(residual) <= limit) continue;
      inconsistent++;
      // The shortest of the first few witnesses is shown; measuring every one could cost depth * edges.
      if (inconsistent > 64) continue;
      const length = this.walkLength(e);
      if (length < worstLength) {
        worst = e;
        worstResidual = residual;
        worstLength = length;
      }
    }
    if (worst >= 0) return { conflict: this.explain(worst, worstResidual), inconsistentOutcomes: inconsistent };
    const potential = value.slice(0, graph.end);
    for (let s = 0; s < graph.end; s++) if (model.terminal[s] !== 0) potential[s] = 0;
    return { potential, inconsistentOutcomes: 0 };
  }

  /** Tree depth of both ends: a short witness is easier to read. */
  private walkLength(edge: number): number {
    return this.depth(this.graph.edgeFrom[edge]) + this.depth(this.graph.edgeTo[edge]);
  }

  private depth(v: number): number {
    let d = 0;
    for (let e = this.parentEdge[v]; e >= 0; d++) {
      v = this.graph.edgeFrom[e] === v ? this.graph.edgeTo[e] : this.graph.edgeFrom[e];
      e = this.parentEdge[v];
    }
    return d;
  }

  /** The tree path from the root of v's component down to v. */
  private treePath(v: number): ShapingStep[] {
    const steps: ShapingStep[] = [];
    for (let e = this.parentEdge[v]; e >= 0; e = this.parentEdge[v]) {
      const childIsFrom = this.graph.edgeFrom[e] === v;
      // Going down from the parent to the child follows the transition when the child is its target.
      steps.push(stepOf(this.model, this.graph, e, !childIsFrom));
      v = childIsFrom ? this.graph.edgeTo[e] : this.graph.edgeFrom[e];
    }
    return steps.reverse();
  }

  /**
   * Explains a failed equation discount*Phi(v) - Phi(u) = F as two values of Phi(u): the one its tree
   * path gives, and discount*Phi(v) - F through v's tree path and the failed outcome. With discount 1
   * the common part of the two paths is dropped and what is left is a cycle.
   */
  private explain(edge: number, residual: number): PotentialConflict {
    const { graph, model, value } = this;
    const u = graph.edgeFrom[edge];
    const v = graph.edgeTo[edge];
    let firstSteps = this.treePath(u);
    let secondSteps = [...this.treePath(v), stepOf(model, graph, edge, false)];
    const anchor = this.anchors[this.component[u]];
    let net: number | undefined;
    if (model.discount === 1 || anchor.kind === 'free') {
      let common = 0;
      while (
        common < firstSteps.length &&
        common < secondSteps.length - 1 &&
        firstSteps[common].outcome === secondSteps[common].outcome &&
        firstSteps[common].forward === secondSteps[common].forward
      ) {
        common++;
      }
      firstSteps = firstSteps.slice(common);
      secondSteps = secondSteps.slice(common);
      if (model.discount === 1) net = -residual;
    }
    return {
      state: u,
      first: { value: value[u], steps: firstSteps },
      second: { value: model.discount * value[v] - graph.edgeAmount[edge], steps: secondSteps },
      anchor,
      net,
    };
  }
}
