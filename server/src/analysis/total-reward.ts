/**
 * Values of one reward under one way of choosing (the best, the worst, one fixed policy or the
 * uniformly random policy), with sound bounds, for any discount.
 *
 * Discount < 1: every value is finite and lies within the geometric-series bounds
 * min(0, r_min)/(1-discount) <= V <= max(0, r_max)/(1-discount) (M. Puterman, Markov Decision
 * Processes, 1994, section 6.2); value iteration certified by the contraction or MacQueen bounds
 * narrows them (interval-iteration.ts).
 *
 * Discount 1 (total reward, no horizon). Convention: the return of a policy is the limit of its
 * expected partial sums; V is +inf or -inf where that limit is infinite for the policies that
 * matter, and [-inf, inf] ("undefined") where it cannot be decided or does not exist (partial
 * sums that oscillate, such as +1, -1, +1, ... forever). Decided by end components:
 *  - For the best (or worst) choice, with sigma = +1 to maximise and -1 to minimise, each maximal
 *    end component gets the sign of the best mean of sigma*reward it can keep (mean-payoff.ts).
 *    Writing P, Z, N, U for the positive, zero, negative and undecided ones and T for terminals:
 *    sigma*V = +inf where a policy reaches P with positive probability while ending in P, Z or T
 *    almost surely (it then earns a positive mean with positive probability and never a negative
 *    one); sigma*V = -inf where neither P nor U can be reached and Z or T cannot be reached almost
 *    surely (every policy keeps a negative mean with positive probability); V is finite where
 *    neither P nor U can be reached and Z or T can be reached almost surely; undefined elsewhere
 *    (conservative: e.g. a state whose only way into P also risks N is reported as [-inf, inf]
 *    even where the magnitudes would decide it).
 *  - For a fixed or the random policy (a Markov chain), bottom SCCs take the role of end
 *    components, and a state's value is infinite when it reaches positive (or negative) bottom
 *    SCCs only, finite when it reaches only zero-reward ones and terminals, undefined otherwise.
 * On the finite region, zero-reward end components are collapsed into one node that may also
 * stay forever for 0 (as Haddad and Monmege 2018 collapse end components), after which every remaining end
 * component loses infinitely, value iteration converges from any start (Bertsekas and Tsitsiklis
 * 1991) and interval iteration applies.
 */
import type { CompiledModel } from '../model/compiled';
import { maximalEndComponents, type EndComponentDecomposition } from './end-components';
import {
  buildChainSystem,
  certifiedChainSolve,
  directionByState,
  offerEarlierDirection,
  type ChainSystem,
} from './chain-solve';
import { policyByState, policyIterationBounds } from './policy-iteration';
import type { ModelGraph } from './graph';
import {
  COMBINE_AVERAGE,
  COMBINE_MAX,
  COMBINE_MIN,
  COMBINE_POLICY,
  measureWidth,
  singletonNodes,
  type SolveResult,
  type Combine,
  type Nodes,
  type Operator,
} from './interval-iteration';
import {
  classifyMdpGains,
  gainBounds,
  GAIN_NEGATIVE,
  GAIN_POSITIVE,
  GAIN_UNDECIDED,
  GAIN_ZERO,
  type MdpGainClasses,
} from './mean-payoff';
import { almostSureReach, backwardLayering, canReach } from './reachability';
import { reshapeZeroGains } from './zero-gain';
import { isCyclicComponent, stronglyConnectedComponents, type SccDecomposition } from './scc';
import { newSolverCounters, type SolverCounters } from './sparse-linear';
import { solveBoundsInOrder } from './sweep-layout';

export const STATUS_FINITE = 0;
export const STATUS_PLUS_INFINITE = 1;
export const STATUS_MINUS_INFINITE = 2;
export const STATUS_UNDEFINED = 3;

/** What every solve of one model shares. */
export interface AnalysisContext {
  model: CompiledModel;
  graph: ModelGraph;
  /** The maximal end components of the whole model. */
  mecs: EndComponentDecomposition;
  precision: number;
  /** Sweep cap per solve. */
  maxSweeps: number;
  /** Outcome visits allowed per end component for numeric gain bounds. */
  gainBudget: number;
  /** The SCCs of all non-absorbing states under all choices, computed once when first needed. */
  fullScc?: SccDecomposition;
  /** The same under a policy's choices, per policy. */
  policyScc?: WeakMap<Int32Array, SccDecomposition>;
  /** Linear systems of the chains solved so far (chain-solve.ts), shared by every solve on the same chain. */
  chains?: ChainCache;
  /** The widest bound behind a printed point figure (reach, length), scaled as scaledWidth. */
  widestFigure?: number;
  /** How the direct solves went, for reporting. */
  counters?: SolverCounters;
  /** Solve fixed-policy and best or worst values directly (linear solves, policy iteration) before sweeping. On unless false. */
  directSolves?: boolean;
  /** Starting guesses per problem name, in this model's state order (warm-start.ts); NaN where none. */
  guesses?: Map<string, Float64Array>;
  /** When set, each named problem's solved values are kept here for the next analysis to start from. */
  solved?: Map<string, Float64Array>;
  /** Solves that started from a guess. */
  warmStarts?: number;
  /** Sweeps of every solve (ValueSolution.sweeps counts one solve's). */
  sweepTotal?: number;
}

/** Chain systems keyed by discount, then by policy (content-compared) or "random". */
interface ChainCache {
  entries: Array<{ discount: number; policy: Int32Array | undefined; system: ChainSystem }>;
}

/**
 * The linear system of a chain, built once per distinct chain and discount. With one choice per
 * state, every policy and the random policy are the same chain.
 */
function chainSystemOf(ctx: AnalysisContext, policy: Int32Array | undefined, discount: number): ChainSystem {
  const cache = (ctx.chains ??= { entries: [] });
  const key = singleChoiceModel(ctx.graph) ? undefined : policy;
  for (const entry of cache.entries) {
    if (entry.discount === discount && samePolicy(entry.policy, key)) return entry.system;
  }
  const system = buildChainSystem(ctx.model, ctx.graph, key, discount, (ctx.counters ??= newSolverCounters()));
  cache.entries.push({ discount, policy: key, system });
  return system;
}

const singleChoice = new WeakMap<ModelGraph, boolean>();
/** Whether every non-absorbing state has exactly one choice (a Markov chain: every policy is the same). */
export function singleChoiceModel(graph: ModelGraph): boolean {
  let known = singleChoice.get(graph);
  if (known === undefined) {
    const { choiceStart, stateCount } = graph.model;
    known = true;
    for (let s = 0; s < stateCount && known; s++)
      if (!graph.absorbing[s] && choiceStart[s + 1] - choiceStart[s] !== 1) known = false;
    singleChoice.set(graph, known);
  }
  return known;
}

function samePolicy(a: Int32Array | undefined, b: Int32Array | undefined): boolean {
  if (a === b) return true;
  if (!a || !b || a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}

/**
 * The SCCs of all non-absorbing states under all choices, or under a policy's choices (`mask`
 * marks them), computed once and shared by the solves that use the same graph. Each component's
 * states are put in exit-first order (see sortWithinComponents).
 */
function liveComponents(ctx: AnalysisContext, policy?: Int32Array, mask?: Uint8Array): SccDecomposition {
  const cached = policy ? ctx.policyScc?.get(policy) : ctx.fullScc;
  if (cached) return cached;
  const live = new Uint8Array(ctx.model.stateCount);
  for (let s = 0; s < live.length; s++) live[s] = ctx.graph.absorbing[s] ? 0 : 1;
  const scc = stronglyConnectedComponents(ctx.model, live, mask);
  sortWithinComponents(scc, ctx.graph);
  if (policy) (ctx.policyScc ??= new WeakMap()).set(policy, scc);
  else ctx.fullScc = scc;
  return scc;
}

/**
 * Orders the states of each component exit-first: the states with an outcome leaving the
 * component, then their predecessors inside it by breadth-first search, then any state that cannot
 * reach an exit (in memory order). Gauss-Seidel sweeps in this order carry the values of solved
 * components through a long corridor in one sweep instead of one state per sweep (the idea of
 * topological value iteration: P. Dai, Mausam, D. Weld and J. Goldsmith, "Topological value
 * iteration algorithms", JAIR 42, 2011, applied inside a component). The order changes only the
 * speed: every sweep is still a monotone Bellman update, so the bounds stay sound.
 */
export function sortWithinComponents(scc: SccDecomposition, graph: ModelGraph): void {
  const { componentOf, order, start } = scc;
  const { choiceStart, outcomeStart, outcomeTarget, outcomeProb } = graph.model;
  const { predStart, predChoice, choiceState } = graph;
  const placed = new Uint8Array(componentOf.length);
  for (let i = 0; i < scc.count; i++) {
    const first = start[i];
    const end = start[i + 1];
    if (end - first < 2) continue;
    const members = order.slice(first, end).sort();
    let fill = first;
    for (const s of members) {
      let exits = false;
      for (let k = outcomeStart[choiceStart[s]]; k < outcomeStart[choiceStart[s + 1]] && !exits; k++) {
        if (outcomeProb[k] > 0 && componentOf[outcomeTarget[k]] !== i) exits = true;
      }
      if (exits) {
        order[fill++] = s;
        placed[s] = 1;
      }
    }
    for (let head = first; head < fill; head++) {
      const t = order[head];
      for (let p = predStart[t]; p < predStart[t + 1]; p++) {
        const s = choiceState[predChoice[p]];
        if (componentOf[s] !== i || placed[s]) continue;
        placed[s] = 1;
        order[fill++] = s;
      }
    }
    for (const s of members) if (!placed[s]) order[fill++] = s;
  }
}

/**
 * The iterated states in a successors-first order taken from the live graph's SCCs, and whether
 * they form an acyclic graph (then one sweep is exact). A subgraph of an acyclic graph is acyclic;
 * a cyclic component that the iterated states only partly cover is taken as cyclic (sound: the
 * solve is then iterative).
 */
function sweepOrder(
  ctx: AnalysisContext,
  iterate: Uint8Array,
  policy: Int32Array | undefined,
  mask: Uint8Array | undefined,
): { order: Int32Array; acyclic: boolean } {
  const scc = liveComponents(ctx, policy, mask);
  const order = new Int32Array(scc.order.length);
  let fill = 0;
  let acyclic = true;
  for (let i = 0; i < scc.count; i++) {
    let used = false;
    for (let j = scc.start[i]; j < scc.start[i + 1]; j++) {
      const s = scc.order[j];
      if (!iterate[s]) continue;
      order[fill++] = s;
      used = true;
    }
    if (used && acyclic && isCyclicComponent(ctx.model, scc, i, mask)) acyclic = false;
  }
  return { order: order.subarray(0, fill), acyclic };
}

/** The sweep order over the finite region at discount 1, where collapsed groups must stay together. */
function groupSweepOrder(
  ctx: AnalysisContext,
  iterate: Uint8Array,
  choices: Uint8Array | undefined,
): { order: Int32Array; acyclic: boolean } {
  const scc = stronglyConnectedComponents(ctx.model, iterate, choices);
  sortWithinComponents(scc, ctx.graph);
  let acyclic = true;
  for (let i = 0; i < scc.count && acyclic; i++) if (isCyclicComponent(ctx.model, scc, i, choices)) acyclic = false;
  return { order: scc.order, acyclic };
}

export interface ValueProblem {
  combine: Combine;
  /** For COMBINE_POLICY: the choice of every non-absorbing state. */
  policy?: Int32Array;
  /** Expected immediate reward per choice. */
  reward: Float64Array;
  discount: number;
  /** Bounds known in advance for every value (e.g. 0 and 1 for probabilities). */
  lowerBound?: number;
  upperBound?: number;
  /** The problem's name for warm starts: its guess is looked up, and its solution kept, under it. */
  name?: string;
  /**
   * The name of the linear system a fixed-policy problem solves, shared by the problems that
   * solve the same one (a policy's reach probabilities and lengths): its certificate's error
   * direction is kept under it for the next analysis (chain-solve.ts, LinearSystem.errorDirection).
   */
  system?: string;
}

export interface ValueSolution {
  lower: Float64Array;
  upper: Float64Array;
  /** Per state: STATUS_FINITE, STATUS_PLUS_INFINITE, STATUS_MINUS_INFINITE or STATUS_UNDEFINED. */
  status: Uint8Array;
  exact: boolean;
  sweeps: number;
  /** The largest relative width of a finite bound pair after solving. */
  relativeWidth: number;
  /** Choices that keep every outcome inside the finite region (discount 1, best or worst); all when absent. */
  finiteChoices?: Uint8Array;
  /** Zero-reward end components of the finite region (discount 1, best or worst). */
  zeroGroups?: EndComponentDecomposition;
  /** The end-component classification (discount 1, best or worst). */
  gains?: MdpGainClasses;
  /**
   * For states whose value is infinite in the optimiser's favour: a choice of a policy that
   * realises it (progress towards a positive end component, or a positive policy inside one).
   */
  infinitePolicy?: Int32Array;
}

export function solveValues(ctx: AnalysisContext, problem: ValueProblem): ValueSolution {
  const { model, graph } = ctx;
  const n = model.stateCount;
  const chainMask = problem.combine === COMBINE_POLICY ? policyChoiceMask(graph, problem.policy!) : undefined;
  const bounds = new Float64Array(2 * n);
  let status: Uint8Array = new Uint8Array(n);
  const iterate = new Uint8Array(n);
  let allowed = chainMask;
  let extras: Partial<ValueSolution> = {};
  let groups: EndComponentDecomposition | undefined;
  let reward = problem.reward;
  let bias: Float64Array | undefined;

  if (problem.discount < 1) {
    for (let s = 0; s < n; s++) iterate[s] = graph.absorbing[s] ? 0 : 1;
  } else if (problem.combine === COMBINE_MAX || problem.combine === COMBINE_MIN) {
    const sigma = problem.combine === COMBINE_MAX ? 1 : -1;
    let decided = classifyBestTotal(ctx, problem.reward, sigma);
    // End components of best mean exactly 0 with non-zero rewards: solved for bias-reshaped rewards.
    const zeroGain = reshapeZeroGains(ctx, decided.gains, problem.reward, sigma);
    if (zeroGain) {
      reward = zeroGain.reward;
      bias = zeroGain.bias;
      decided = classifyBestTotal(ctx, reward, sigma);
    }
    status = decided.status;
    for (let s = 0; s < n; s++) iterate[s] = status[s] === STATUS_FINITE && !graph.absorbing[s] ? 1 : 0;
    const finiteChoices = choicesWithin(graph, iterate);
    const zeroChoices = new Uint8Array(model.choiceCount);
    for (let c = 0; c < model.choiceCount; c++) zeroChoices[c] = finiteChoices[c] && reward[c] === 0 ? 1 : 0;
    groups = maximalEndComponents(graph, iterate, zeroChoices);
    allowed = finiteChoices.slice();
    // Inside a collapsed group, the zero-reward choices that stay inside are its "stay" option.
    for (let c = 0; c < model.choiceCount; c++) if (groups.choiceIn[c]) allowed[c] = 0;
    extras = { finiteChoices, zeroGroups: groups, gains: decided.gains, infinitePolicy: decided.infinitePolicy };
  } else {
    const decided = classifyChainTotal(ctx, problem, chainMask);
    status = decided.status;
    for (let s = 0; s < n; s++)
      iterate[s] = status[s] === STATUS_FINITE && !graph.absorbing[s] && !decided.zeroBottom[s] ? 1 : 0;
  }

  // Sweep order: successors first (reverse topological order of SCCs), collapsed groups as one node.
  const { order, acyclic } = groups
    ? groupSweepOrder(ctx, iterate, unionMask(allowed, groups.choiceIn))
    : sweepOrder(ctx, iterate, problem.policy, chainMask);
  const nodes = groups && groups.count > 0 ? groupedNodes(order, groups) : singletonNodes(order);

  const op: Operator = {
    model,
    combine: problem.combine,
    policy: problem.policy,
    reward,
    discount: problem.discount,
    allowed,
  };
  const solved = bias ? { ...problem, reward, lowerBound: undefined, upperBound: undefined } : problem;
  const apriori = aprioriBounds(model, solved, iterate, allowed);
  const guess = problem.name !== undefined ? ctx.guesses?.get(problem.name) : undefined;
  if (guess && !acyclic) ctx.warmStarts = (ctx.warmStarts ?? 0) + 1;
  const solveOptions = {
    precision: ctx.precision,
    lowerBound: apriori.lower,
    upperBound: apriori.upper,
    acyclic,
    maxSweeps: ctx.maxSweeps,
    guess,
  };
  const result =
    (!acyclic && directSolve(ctx, op, solved, nodes, iterate, solveOptions, bounds)) ||
    solveBoundsInOrder(op, nodes, bounds, solveOptions);
  ctx.sweepTotal = (ctx.sweepTotal ?? 0) + result.sweeps;
  if (problem.name !== undefined && ctx.solved)
    ctx.solved.set(problem.name, solvedEstimate(iterate, bounds, result.estimate));

  const lower = new Float64Array(n);
  const upper = new Float64Array(n);
  let exact = result.exact;
  for (let s = 0; s < n; s++) {
    switch (status[s]) {
      case STATUS_PLUS_INFINITE:
        lower[s] = upper[s] = Infinity;
        break;
      case STATUS_MINUS_INFINITE:
        lower[s] = upper[s] = -Infinity;
        break;
      case STATUS_UNDEFINED:
        lower[s] = -Infinity;
        upper[s] = Infinity;
        exact = false;
        break;
      default:
        if (iterate[s]) {
          lower[s] = bounds[2 * s];
          upper[s] = bounds[2 * s + 1];
          if (bias && bias[s] !== 0) {
            // Adding the bias back rounds; widen by a few units in the last place to stay sound.
            const slack = 4 * Number.EPSILON * (Math.abs(lower[s]) + Math.abs(upper[s]) + Math.abs(bias[s]));
            lower[s] += bias[s] - slack;
            upper[s] += bias[s] + slack;
          }
        }
    }
  }
  return { lower, upper, status, exact, sweeps: result.sweeps, relativeWidth: result.relativeWidth, ...extras };
}

/**
 * What the next analysis starts from: the solver's own estimate where it has one (a linear
 * solve's x, which a verification accepts without iterating), else the middle of the bounds; NaN
 * for states that were not solved.
 */
function solvedEstimate(iterate: Uint8Array, bounds: Float64Array, estimate: Float64Array | undefined): Float64Array {
  const out = new Float64Array(iterate.length).fill(NaN);
  for (let s = 0; s < iterate.length; s++) {
    if (!iterate[s]) continue;
    const v = estimate ? estimate[s] : (bounds[2 * s] + bounds[2 * s + 1]) / 2;
    if (Number.isFinite(v)) out[s] = v;
  }
  return out;
}

/**
 * The direct route: a certified linear solve for a chain (chain-solve.ts), certified policy
 * iteration for the best or worst values (policy-iteration.ts). Undefined when it does not apply
 * or its certificate fails; the sweeps of solveBounds (solveBoundsInOrder) are the fallback.
 */
function directSolve(
  ctx: AnalysisContext,
  op: Operator,
  problem: ValueProblem,
  nodes: Nodes,
  iterate: Uint8Array,
  options: { precision: number; lowerBound?: number; upperBound?: number; guess?: Float64Array },
  bounds: Float64Array,
): SolveResult | undefined {
  // The assembled systems hold about 12 bytes per outcome (more with ILU(0)); past this size the
  // sweeps, which need no extra memory, are kept.
  if (ctx.directSolves === false || nodes.count === 0 || ctx.model.outcomeCount > DIRECT_OUTCOME_LIMIT)
    return undefined;
  // With one choice per state and no collapsed component, the best, the worst and every policy's
  // values are those of the one chain: solve it once.
  const oneChain = singleChoiceModel(ctx.graph) && nodes.count === nodes.members.length && !nodes.stay.includes(1);
  if (problem.combine === COMBINE_POLICY || problem.combine === COMBINE_AVERAGE || oneChain) {
    const system = chainSystemOf(ctx, problem.policy, problem.discount);
    const directionName = problem.system !== undefined ? `${problem.system}${DIRECTION_SUFFIX}` : undefined;
    if (directionName) offerEarlierDirection(system, ctx.guesses?.get(directionName));
    const estimate = new Float64Array(ctx.model.stateCount);
    const certified = certifiedChainSolve(system, problem.reward, iterate, options, bounds, options.guess, estimate);
    if (directionName && ctx.solved) {
      const direction = directionByState(system);
      if (direction) ctx.solved.set(directionName, direction);
    }
    if (!certified) return undefined;
    return { sweeps: 0, exact: false, relativeWidth: measureWidth(nodes, bounds), estimate };
  }
  // Best or worst values: policy iteration where value iteration would need many sweeps (long
  // effective horizons); short ones converge in a few sweeps anyway.
  if (problem.discount < DIRECT_FROM_DISCOUNT) return undefined;
  const policyName = problem.name !== undefined ? `${problem.name}${POLICY_SUFFIX}` : undefined;
  const solved = policyIterationBounds(
    ctx.graph,
    op,
    nodes,
    options.precision,
    (ctx.counters ??= newSolverCounters()),
    options.guess,
    policyName ? ctx.guesses?.get(policyName) : undefined,
  );
  if (!solved) return undefined;
  if (policyName && ctx.solved) ctx.solved.set(policyName, policyByState(ctx.graph, nodes, solved.policy));
  const estimate = new Float64Array(ctx.model.stateCount);
  const floor = options.lowerBound ?? -Infinity;
  const ceiling = options.upperBound ?? Infinity;
  for (let i = 0; i < nodes.count; i++) {
    for (let m = nodes.start[i]; m < nodes.start[i + 1]; m++) {
      const s2 = nodes.members[m] << 1;
      bounds[s2] = Math.max(floor, solved.lower[i]);
      bounds[s2 + 1] = Math.min(ceiling, solved.upper[i]);
      estimate[nodes.members[m]] = solved.estimate[i];
    }
  }
  return { sweeps: 0, exact: false, relativeWidth: measureWidth(nodes, bounds), estimate };
}

/** Appended to a system's name (ValueProblem.system) to name its error direction in a warm start. */
const DIRECTION_SUFFIX = ':error-direction';
/** Appended to a best or worst problem's name to name its final policy in a warm start. */
const POLICY_SUFFIX = ':policy';

/** The most outcomes a model may have for the direct solves (memory). */
const DIRECT_OUTCOME_LIMIT = 8_000_000;

/** Policy iteration replaces sweeps for best and worst values from this discount up (effective horizon 100 steps). */
const DIRECT_FROM_DISCOUNT = 0.99;

/** A priori bounds on the iterated states' values, or undefined sides. */
function aprioriBounds(
  model: CompiledModel,
  problem: ValueProblem,
  iterate: Uint8Array,
  allowed: Uint8Array | undefined,
): { lower?: number; upper?: number } {
  let rmin = 0;
  let rmax = 0;
  const { choiceStart } = model;
  for (let s = 0; s < model.stateCount; s++) {
    if (!iterate[s]) continue;
    for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) {
      if (allowed && !allowed[c]) continue;
      const r = problem.reward[c];
      if (r < rmin) rmin = r;
      if (r > rmax) rmax = r;
    }
  }
  let lower: number | undefined;
  let upper: number | undefined;
  if (problem.discount < 1) {
    lower = rmin / (1 - problem.discount);
    upper = rmax / (1 - problem.discount);
  } else {
    // Total reward: with no negative reward no policy can end below 0, and vice versa.
    if (rmin >= 0) lower = 0;
    if (rmax <= 0) upper = 0;
  }
  if (problem.lowerBound !== undefined)
    lower = lower === undefined ? problem.lowerBound : Math.max(lower, problem.lowerBound);
  if (problem.upperBound !== undefined)
    upper = upper === undefined ? problem.upperBound : Math.min(upper, problem.upperBound);
  return { lower, upper };
}

/** 1 for the choice of each state under `policy`. */
export function policyChoiceMask(graph: ModelGraph, policy: Int32Array): Uint8Array {
  const mask = new Uint8Array(graph.model.choiceCount);
  for (let s = 0; s < policy.length; s++) if (policy[s] >= 0) mask[policy[s]] = 1;
  return mask;
}

/** Choices of states in `region` whose every outcome of positive probability stays in the region or ends the episode. */
function choicesWithin(graph: ModelGraph, region: Uint8Array): Uint8Array {
  const { model, choiceState, absorbing } = graph;
  const { outcomeStart, outcomeTarget, outcomeProb } = model;
  const out = new Uint8Array(model.choiceCount);
  for (let c = 0; c < model.choiceCount; c++) {
    if (!region[choiceState[c]]) continue;
    let ok = 1;
    for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) {
      const t = outcomeTarget[k];
      if (outcomeProb[k] > 0 && !region[t] && !absorbing[t]) {
        ok = 0;
        break;
      }
    }
    out[c] = ok;
  }
  return out;
}

function unionMask(a: Uint8Array | undefined, b: Uint8Array): Uint8Array | undefined {
  if (!a) return undefined;
  const out = a.slice();
  for (let i = 0; i < b.length; i++) if (b[i]) out[i] = 1;
  return out;
}

/** Nodes in `order`, with each group's members gathered into one node where its first member appears. */
function groupedNodes(order: Int32Array, groups: EndComponentDecomposition): Nodes {
  const emitted = new Uint8Array(groups.count);
  const start: number[] = [0];
  const members = new Int32Array(order.length);
  const stay: number[] = [];
  let fill = 0;
  for (let i = 0; i < order.length; i++) {
    const s = order[i];
    const g = groups.componentOf[s];
    if (g >= 0) {
      if (emitted[g]) continue;
      emitted[g] = 1;
      for (const member of groups.states[g]) members[fill++] = member;
      stay.push(1);
    } else {
      members[fill++] = s;
      stay.push(0);
    }
    start.push(fill);
  }
  return { count: stay.length, start: Int32Array.from(start), members, stay: Uint8Array.from(stay) };
}

/** Status of every state for the best (sigma = 1) or worst (sigma = -1) total reward at discount 1. */
function classifyBestTotal(
  ctx: AnalysisContext,
  reward: Float64Array,
  sigma: number,
): { status: Uint8Array; gains: MdpGainClasses; infinitePolicy: Int32Array } {
  const { model, graph, mecs } = ctx;
  const n = model.stateCount;
  const gains = classifyMdpGains(graph, mecs, reward, sigma, ctx.gainBudget);
  const positive = new Uint8Array(n);
  const positiveOrUndecided = new Uint8Array(n);
  const good = new Uint8Array(n);
  const zeroOrEnd = new Uint8Array(n);
  for (let s = 0; s < n; s++) {
    if (graph.absorbing[s]) {
      good[s] = zeroOrEnd[s] = 1;
      continue;
    }
    const i = mecs.componentOf[s];
    if (i < 0) continue;
    const sign = gains.sign[i];
    if (sign === GAIN_POSITIVE) positive[s] = positiveOrUndecided[s] = good[s] = 1;
    else if (sign === GAIN_UNDECIDED) positiveOrUndecided[s] = 1;
    else if (sign === GAIN_ZERO) good[s] = zeroOrEnd[s] = 1;
  }
  const reachesPositiveOrUndecided = canReach(graph, positiveOrUndecided);
  const endsWell = almostSureReach(graph, good);
  const endsWellChoices = choicesWithin(graph, endsWell);
  const towardPositive = backwardLayering(graph, positive, { domain: endsWell, allowed: endsWellChoices });
  const endsFinite = almostSureReach(graph, zeroOrEnd);
  const favourable = sigma > 0 ? STATUS_PLUS_INFINITE : STATUS_MINUS_INFINITE;
  const unfavourable = sigma > 0 ? STATUS_MINUS_INFINITE : STATUS_PLUS_INFINITE;
  const status = new Uint8Array(n);
  const infinitePolicy = new Int32Array(n).fill(-1);
  for (let s = 0; s < n; s++) {
    if (graph.absorbing[s]) status[s] = STATUS_FINITE;
    else if (endsWell[s] && towardPositive.layer[s] >= 0) {
      status[s] = favourable;
      infinitePolicy[s] = positive[s] ? gains.positivePolicy[s] : towardPositive.via[s];
    } else if (!reachesPositiveOrUndecided[s]) status[s] = endsFinite[s] ? STATUS_FINITE : unfavourable;
    else status[s] = STATUS_UNDEFINED;
  }
  return { status, gains, infinitePolicy };
}

/** Status of every state under a Markov chain (a fixed or the random policy) at discount 1. */
function classifyChainTotal(
  ctx: AnalysisContext,
  problem: ValueProblem,
  chainMask: Uint8Array | undefined,
): { status: Uint8Array; zeroBottom: Uint8Array } {
  const { model, graph } = ctx;
  const n = model.stateCount;
  const { choiceStart, outcomeStart, outcomeTarget, outcomeProb } = model;
  const scc = liveComponents(ctx, problem.policy, chainMask);
  const positive = new Uint8Array(n);
  const negative = new Uint8Array(n);
  const undecided = new Uint8Array(n);
  const zeroBottom = new Uint8Array(n);
  const local = new Int32Array(n).fill(-1);
  const { order } = scc;
  for (let i = 0; i < scc.count; i++) {
    // Indices into scc.order rather than a subarray per component: most components are single states.
    const first = scc.start[i];
    const end = scc.start[i + 1];
    let bottom = true;
    let hasPositive = false;
    let hasNegative = false;
    for (let j = first; j < end && bottom; j++) {
      const s = order[j];
      let sum = 0;
      let magnitude = 0;
      let used = 0;
      for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) {
        if (chainMask && !chainMask[c]) continue;
        sum += problem.reward[c];
        magnitude += Math.abs(problem.reward[c]);
        used++;
        for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) {
          if (outcomeProb[k] > 0 && scc.componentOf[outcomeTarget[k]] !== i) bottom = false;
        }
      }
      const mean = Math.abs(sum) <= 1e-12 * magnitude ? 0 : sum / Math.max(1, used);
      if (mean > 0) hasPositive = true;
      else if (mean < 0) hasNegative = true;
    }
    if (!bottom) continue;
    // Every state of a bottom SCC is visited with positive frequency, so one-signed rewards decide.
    let sign: number;
    if (!hasPositive && !hasNegative) sign = GAIN_ZERO;
    else if (!hasNegative) sign = GAIN_POSITIVE;
    else if (!hasPositive) sign = GAIN_NEGATIVE;
    else {
      const members = order.slice(first, end);
      const b = gainBounds(graph, members, chainMask, problem.reward, 1, local, ctx.gainBudget, true);
      sign = b.lower > 0 ? GAIN_POSITIVE : b.upper < 0 ? GAIN_NEGATIVE : GAIN_UNDECIDED;
    }
    const mark =
      sign === GAIN_ZERO
        ? zeroBottom
        : sign === GAIN_POSITIVE
          ? positive
          : sign === GAIN_NEGATIVE
            ? negative
            : undecided;
    for (let j = first; j < end; j++) mark[order[j]] = 1;
  }
  const reachesPositive = canReach(graph, positive, chainMask);
  const reachesNegative = canReach(graph, negative, chainMask);
  const reachesUndecided = canReach(graph, undecided, chainMask);
  const status = new Uint8Array(n);
  for (let s = 0; s < n; s++) {
    if (graph.absorbing[s]) continue;
    const p = reachesPositive[s];
    const m = reachesNegative[s];
    if (reachesUndecided[s] || (p && m)) status[s] = STATUS_UNDEFINED;
    else if (p) status[s] = STATUS_PLUS_INFINITE;
    else if (m) status[s] = STATUS_MINUS_INFINITE;
  }
  return { status, zeroBottom };
}

export { COMBINE_AVERAGE, COMBINE_MAX, COMBINE_MIN, COMBINE_POLICY };
