/**
 * The exact analysis of a compiled model: reachability, end components, sound value bounds for
 * the optimal, worst and uniformly random policies (or finite-horizon values), reach
 * probabilities, episode lengths, Q* and best choices, and reward-term shares. Pure: no I/O.
 *
 * Methods: finite-horizon.ts (backward induction, with a horizon); interval-iteration.ts
 * (certified value iteration at discount < 1, interval iteration at discount 1, one exact pass on
 * acyclic graphs); total-reward.ts (infinite and undefined totals at discount 1 from end
 * components, mean-payoff.ts); policy.ts (Q bounds, best choices, policies that attain V*).
 * Reach probabilities and expected lengths are total-reward problems of the same solver (reward 1
 * for entering a terminal of the kind, or for every step) under each policy's Markov chain.
 */
import { TERMINAL_CODE, type CompiledModel } from '../model/compiled';
import { maximalEndComponents, type EndComponentDecomposition } from './end-components';
import { solveFiniteHorizon } from './finite-horizon';
import {
  expectedChoiceValues,
  graphOf,
  graphWithin,
  expectedRewards,
  terminalEntryProbabilities,
  type ModelGraph,
} from './graph';
import { COMBINE_AVERAGE, COMBINE_MAX, COMBINE_MIN, COMBINE_POLICY, scaledWidth } from './interval-iteration';
import { classifyMdpGains, GAIN_NEGATIVE, GAIN_POSITIVE, GAIN_ZERO, type MdpGainClasses } from './mean-payoff';
import { attainingPolicy, bestChoices, choiceBounds } from './policy';
import { almostSureReach, canReach, reachableFromStart } from './reachability';
import { stronglyConnectedComponents } from './scc';
import {
  policyChoiceMask,
  singleChoiceModel,
  solveValues,
  sortWithinComponents,
  type AnalysisContext,
  type ValueSolution,
} from './total-reward';
import { guessesFor, UNDISCOUNTED_PREFIX, warmStartOf, type WarmStart } from './warm-start';
import type {
  Analysis,
  Bounds,
  EndComponent,
  Interval,
  PolicyAnalysis,
  ReachAtStart,
  ReachProbabilities,
  StartSummary,
  TermShare,
} from './types';

export interface AnalyzeModelOptions {
  /**
   * Target width of every finite bound: at most `precision` for values up to 1000 in magnitude,
   * and precision * |value| / 1000 beyond (relative for large values; stricter than a width
   * relative to |value| above 1). The width reached is reported as Analysis.precision.
   */
  precision: number;
  /** Sweep cap per solve, below the default work cap (for tests of what a capped solve prints). */
  maxSweeps?: number;
  /** Set false to solve by sweeps only (no linear solves or policy iteration). */
  directSolves?: boolean;
  /** A previous analysis' solution (of an earlier version of the same spec): the solvers start from it. */
  startFrom?: WarmStart;
  /** Keep this analysis' solution in Analysis.solution, for the next analysis to start from. */
  keepSolution?: boolean;
  /**
   * Set false to skip the expected-length solves (their figures are then NaN, "undetermined"), for
   * analyses whose lengths nobody reads, such as the goal route's chain.
   */
  expectedLengths?: boolean;
}

/**
 * Work caps that keep a single analysis within minutes even on million-state models: outcome
 * visits per solve (at least 1000 sweeps), and the like for gains and horizons. A solve stopped by
 * a cap reports the wider, still sound, bounds it reached.
 */
const SWEEP_WORK_LIMIT = 4e9;
const GAIN_WORK_LIMIT = 2e8;
const HORIZON_WORK_LIMIT = 1e9;
/** Sweeps per solve at most, however small the model (a solve that needs more reports wider bounds). */
const MAX_SWEEPS = 1_000_000;

const KIND_CODES = [TERMINAL_CODE.goal, TERMINAL_CODE.failure, TERMINAL_CODE.neutral];

export function analyzeModel(model: CompiledModel, options: AnalyzeModelOptions): Analysis {
  const precision = options.precision > 0 && Number.isFinite(options.precision) ? options.precision : 1e-6;
  const graph = graphOf(model);
  // The SCCs of the whole graph serve as the first round of the end-component refinement and as
  // the sweep order of the solves that use every choice.
  const live = new Uint8Array(model.stateCount);
  for (let s = 0; s < live.length; s++) live[s] = graph.absorbing[s] ? 0 : 1;
  const fullScc = stronglyConnectedComponents(model, live);
  sortWithinComponents(fullScc, graph);
  const mecs = maximalEndComponents(graph, undefined, undefined, fullScc);
  const ctx: AnalysisContext = {
    model,
    graph,
    mecs,
    fullScc,
    precision,
    maxSweeps: Math.min(
      options.maxSweeps ?? MAX_SWEEPS,
      MAX_SWEEPS,
      Math.max(1000, Math.floor(SWEEP_WORK_LIMIT / Math.max(1, model.outcomeCount))),
    ),
    directSolves: options.directSolves,
    gainBudget: GAIN_WORK_LIMIT,
    guesses: guessesFor(model, options.startFrom),
    solved: options.keepSolution ? new Map() : undefined,
  };
  const reachable = reachableFromStart(model);
  const reward = expectedRewards(model);
  const kindPresent = KIND_CODES.map((code) => model.terminal.includes(code));
  const entry = KIND_CODES.map((code, i) => (kindPresent[i] ? terminalEntryProbabilities(model, code) : undefined));
  const terms = termRewards(model, reward);
  const sigma = model.maximize ? 1 : -1;

  const base =
    model.horizon !== undefined
      ? horizonAnalysis(graph, model.horizon, reward, entry, terms)
      : stationaryAnalysis(ctx, reward, entry, terms, options.expectedLengths !== false);

  const gains = base.gains ?? classifyMdpGains(graph, mecs, reward, sigma, GAIN_WORK_LIMIT);
  const endComponents: EndComponent[] = mecs.states.map((states, i) =>
    endComponentOf(states, mecs.choices[i], gains, i, sigma),
  );

  const termShares = shareOf(
    terms.map((t, i) => ({ term: t.name, value: startPoint(model, base.termValues[i]) })),
    precision,
  );
  const start: StartSummary = {
    optimal: startInterval(model, base.optimal.values),
    worst: startInterval(model, base.worst.values),
    random: startInterval(model, base.random.values),
    reach: { optimal: startReach(model, base.optimal.reach), random: startReach(model, base.random.reach) },
    maxGoalReach: startPoint(model, base.maxGoalReach),
    expectedLength: {
      optimal: startPoint(model, base.optimal.expectedLength),
      random: startPoint(model, base.random.expectedLength),
    },
  };
  return {
    model,
    reachable,
    optimal: base.optimal,
    worst: base.worst,
    random: base.random,
    q: base.q,
    isBest: base.isBest,
    maxGoalReach: base.maxGoalReach,
    endComponents,
    horizon: base.horizon,
    termShares,
    start,
    precision: Math.max(
      widestBound(base.optimal.values),
      widestBound(base.worst.values),
      widestBound(base.random.values),
      ctx.widestFigure ?? 0,
    ),
    solves: ctx.counters?.solves ?? 0,
    krylovIterations: ctx.counters?.krylovIterations ?? 0,
    exact: base.exact,
    iterations: base.iterations,
    sweeps: ctx.sweepTotal ?? 0,
    warmStarts: ctx.warmStarts ?? 0,
    solution: ctx.solved && model.horizon === undefined ? warmStartOf(model, ctx.solved) : undefined,
    derivedStart: options.startFrom?.derived,
  };
}

/** What the stationary and the finite-horizon paths both produce. */
type CoreResult = Pick<
  Analysis,
  'optimal' | 'worst' | 'random' | 'q' | 'isBest' | 'maxGoalReach' | 'horizon' | 'exact' | 'iterations'
> & {
  /** Per reward term (in termRewards order), its total under the optimal policy. */
  termValues: Bounds[];
  /** The end-component classification of the optimal solve, when it made one. */
  gains?: MdpGainClasses;
};

interface TermReward {
  name: string;
  perChoice: Float64Array;
}

/**
 * Per choice, the expected value of each named term, of the untyped remainder ("") and of the
 * potential-based shaping ("shaping"). Without named terms or shaping, the remainder is the reward.
 */
function termRewards(model: CompiledModel, reward: Float64Array): TermReward[] {
  const out: TermReward[] = model.termNames.map((name, j) => ({
    name,
    perChoice: expectedChoiceValues(model, model.outcomeTermReward[j]),
  }));
  const shaping = model.outcomePotentialReward;
  if (out.length === 0 && !shaping) return [{ name: '', perChoice: reward }];
  const remainder = new Float64Array(model.outcomeCount);
  let any = out.length === 0;
  for (let k = 0; k < model.outcomeCount; k++) {
    let rest = model.outcomeReward[k] - (shaping ? shaping[k] : 0);
    for (let j = 0; j < model.termNames.length; j++) rest -= model.outcomeTermReward[j][k];
    // Rounding of the subtraction is not a reward of its own.
    if (Math.abs(rest) <= 1e-12 * Math.abs(model.outcomeReward[k])) rest = 0;
    remainder[k] = rest;
    if (rest !== 0) any = true;
  }
  if (any) out.push({ name: '', perChoice: expectedChoiceValues(model, remainder) });
  if (shaping) out.push({ name: 'shaping', perChoice: expectedChoiceValues(model, shaping) });
  return out;
}

/**
 * At discount 1 the shaping reward Phi(s') - Phi(s) adds up to Phi(end) - Phi(start) along any
 * run and to 0 around any loop, yet it gives loops that pay nothing rewards of both signs, whose
 * total the end-component analysis could only call undefined. When every terminal has potential
 * 0, the part of the potential outside end components, Psi, is therefore taken out: the values are
 * solved for the rewards without Psi's shaping and shifted by -Psi(s). This is exact for every
 * policy, also those that never end: a run that never ends stays in end components from some step
 * on (almost surely), where Psi is 0, so Psi's shaping adds up to -Psi(start) on every run
 * (A. Ng, D. Harada and S. Russell, "Policy invariance under reward transformations", ICML 1999,
 * Theorem 1, applied to the runs rather than to proper policies only). The potential on end
 * components stays in the rewards: staying forever there is not ending, and taking it out too
 * would shift the return of a policy that stays by Phi (the unsound [-1, -1] for a state that can
 * stay forever at Phi = 1 for 0 per step). Undefined when that does not apply or changes nothing.
 */
function shapingShift(
  model: CompiledModel,
  graph: ModelGraph,
  mecs: EndComponentDecomposition,
): { unshaped: Float64Array; shift: Float64Array; potentialShift: Float64Array } | undefined {
  const { potential, outcomePotentialReward } = model;
  if (model.discount !== 1 || !potential || !outcomePotentialReward) return undefined;
  for (let s = 0; s < model.stateCount; s++) if (model.terminal[s] !== 0 && potential[s] !== 0) return undefined;
  const outside = new Float64Array(model.stateCount);
  let any = false;
  for (let s = 0; s < model.stateCount; s++) {
    outside[s] = graph.absorbing[s] || mecs.componentOf[s] >= 0 ? 0 : potential[s];
    if (outside[s] !== 0) any = true;
  }
  if (!any) return undefined;
  const base = new Float64Array(model.outcomeCount);
  for (let s = 0; s < model.stateCount; s++) {
    for (let k = model.outcomeStart[model.choiceStart[s]]; k < model.outcomeStart[model.choiceStart[s + 1]]; k++) {
      base[k] = model.outcomeReward[k] - (outside[model.outcomeTarget[k]] - outside[s]);
    }
  }
  const shift = new Float64Array(model.stateCount);
  const potentialShift = new Float64Array(model.stateCount);
  for (let s = 0; s < shift.length; s++) {
    shift[s] = -outside[s];
    potentialShift[s] = graph.absorbing[s] ? 0 : -potential[s];
  }
  return { unshaped: expectedChoiceValues(model, base), shift, potentialShift };
}

/** Bounds moved by a per-state (or, with `owner`, per-choice owner state) shift; infinite bounds stay. */
function shifted(bounds: Bounds, shift: Float64Array, owner?: Int32Array): Bounds {
  const lower = bounds.lower.slice();
  const upper = bounds.upper.slice();
  for (let i = 0; i < lower.length; i++) {
    const d = shift[owner ? owner[i] : i];
    if (Number.isFinite(lower[i])) lower[i] += d;
    if (Number.isFinite(upper[i])) upper[i] += d;
  }
  return { lower, upper };
}

function stationaryAnalysis(
  ctx: AnalysisContext,
  shapedReward: Float64Array,
  entry: (Float64Array | undefined)[],
  terms: TermReward[],
  lengths: boolean,
): CoreResult {
  const { model, graph } = ctx;
  const discount = model.discount;
  const transform = shapingShift(model, graph, ctx.mecs);
  // Everything below is solved in unshaped terms when the transform applies, and shifted at the end.
  const reward = transform ? transform.unshaped : shapedReward;
  // A Markov chain (one choice per state) has one policy: the best, the worst and the random one
  // are the same problem, solved once (goal-route.ts analyses such chains).
  const chain = singleChoiceModel(graph);
  // In a chain the best values solve the random policy's system (named for its error direction).
  const maxSolution = solveValues(ctx, {
    combine: COMBINE_MAX,
    reward,
    discount,
    name: 'max',
    system: chain ? 'random' : undefined,
  });
  const minSolution = chain ? maxSolution : solveValues(ctx, { combine: COMBINE_MIN, reward, discount, name: 'min' });
  const randomSolution = chain
    ? maxSolution
    : solveValues(ctx, { combine: COMBINE_AVERAGE, reward, discount, name: 'random', system: 'random' });
  const optimalSolution = model.maximize ? maxSolution : minSolution;
  const worstSolution = model.maximize ? minSolution : maxSolution;
  const sigma = model.maximize ? 1 : -1;

  const q = choiceBounds(model, reward, discount, optimalSolution.lower, optimalSolution.upper);
  const isBest = bestChoices(graph, q, optimalSolution.lower, optimalSolution.upper, sigma);
  const optimalPolicy = attainingPolicy(graph, optimalSolution, q, isBest, sigma);
  const worstQ = choiceBounds(model, reward, discount, worstSolution.lower, worstSolution.upper);
  const worstPolicy = attainingPolicy(
    graph,
    worstSolution,
    worstQ,
    bestChoices(graph, worstQ, worstSolution.lower, worstSolution.upper, -sigma),
    -sigma,
  );

  // Each solve is named for warm starts, and so is the system it solves (`system`: one per policy
  // and discount); the reach and length problems are at discount 1 whatever the model's.
  const underPolicy =
    (policy: Int32Array | undefined, system: string) =>
    (name: string, perChoice: Float64Array, discountFactor: number, lowerBound?: number, upperBound?: number) =>
      solveValues(ctx, {
        combine: policy ? COMBINE_POLICY : COMBINE_AVERAGE,
        policy,
        reward: perChoice,
        discount: discountFactor,
        lowerBound,
        upperBound,
        name,
        system,
      });
  const describe = (solution: ValueSolution, policy: Int32Array | undefined, label: string): PolicyAnalysis => {
    const solve = underPolicy(policy, `${UNDISCOUNTED_PREFIX}${label}`);
    // The graph searches of every terminal kind read only the policy's choices: one restricted
    // copy of the predecessor lists serves them all.
    const chainGraph = policy ? graphWithin(graph, policyChoiceMask(graph, policy)) : graph;
    const reach = reachOf(
      model.stateCount,
      entry.map((e, i) =>
        e
          ? withCertainties(
              chainGraph,
              () => pointValues(solve(`${UNDISCOUNTED_PREFIX}${label}:reach${i}`, e, 1, 0, 1), ctx),
              KIND_CODES[i],
              'chain',
            )
          : undefined,
      ),
    );
    const expectedLength = lengths
      ? pointValues(solve(`${UNDISCOUNTED_PREFIX}${label}:length`, ones, 1, 0), ctx)
      : new Float64Array(model.stateCount).fill(NaN);
    return { values: { lower: solution.lower, upper: solution.upper }, reach, expectedLength, policy };
  };
  const ones = new Float64Array(model.choiceCount).fill(1);
  const optimal = describe(optimalSolution, optimalPolicy, 'optimal');
  const sameChain = (solution: ValueSolution, policy: Int32Array | undefined): PolicyAnalysis => ({
    ...optimal,
    values: { lower: solution.lower, upper: solution.upper },
    policy,
  });
  const worst = chain ? sameChain(worstSolution, worstPolicy) : describe(worstSolution, worstPolicy, 'worst');
  const random = chain ? sameChain(randomSolution, undefined) : describe(randomSolution, undefined, 'random');

  const goal = entry[0];
  // In a chain the most probable way to a goal is the only way.
  const maxGoalReach =
    chain && goal
      ? optimal.reach.goal
      : goal
        ? withCertainties(
            graph,
            () =>
              pointValues(
                solveValues(ctx, {
                  combine: COMBINE_MAX,
                  reward: goal,
                  discount: 1,
                  lowerBound: 0,
                  upperBound: 1,
                  name: `${UNDISCOUNTED_PREFIX}max-goal`,
                }),
                ctx,
              ),
            TERMINAL_CODE.goal,
            'max',
          )
        : new Float64Array(model.stateCount);

  // Each term's total under the optimal policy; a lone remainder is the optimal value itself.
  const termValues: Bounds[] = terms.map((t) => {
    if (terms.length === 1 && t.perChoice === shapedReward) return optimal.values;
    if (transform && t.name === 'shaping') return shapingTotal(transform.potentialShift, optimal.reach.none);
    const solution = underPolicy(optimalPolicy, 'optimal')(`term:${t.name}`, t.perChoice, discount);
    return { lower: solution.lower, upper: solution.upper };
  });

  if (transform) {
    for (const analysis of [optimal, worst, random]) analysis.values = shifted(analysis.values, transform.shift);
  }
  return {
    optimal,
    worst,
    random,
    q: transform ? shifted(q, transform.shift, graph.choiceState) : q,
    isBest,
    maxGoalReach,
    termValues,
    gains: optimalSolution.gains,
    exact: maxSolution.exact && minSolution.exact && randomSolution.exact,
    iterations: maxSolution.sweeps + minSolution.sweeps + randomSolution.sweeps,
  };
}

/** The shaping term's total at discount 1: -Phi(s) where the optimal policy ends surely, undefined elsewhere. */
function shapingTotal(shift: Float64Array, neverEnds: Float64Array): Bounds {
  const lower = new Float64Array(shift.length);
  const upper = new Float64Array(shift.length);
  for (let s = 0; s < shift.length; s++) {
    const sure = neverEnds[s] <= 1e-9;
    lower[s] = sure ? shift[s] : -Infinity;
    upper[s] = sure ? shift[s] : Infinity;
  }
  return { lower, upper };
}

function horizonAnalysis(
  graph: ModelGraph,
  horizon: number,
  reward: Float64Array,
  entry: (Float64Array | undefined)[],
  terms: TermReward[],
): CoreResult {
  const model = graph.model;
  const solved = solveFiniteHorizon(graph, horizon, {
    reward,
    entry,
    terms: terms.map((t) => t.perChoice),
    maximize: model.maximize,
    budget: HORIZON_WORK_LIMIT,
  });
  const { tailLower, tailUpper } = solved;
  // A cut-short induction widens every non-terminal value (and every Q) by the tail's bounds.
  const widen = (values: Float64Array, perState: boolean): Bounds => {
    const lower = values.slice();
    const upper = values.slice();
    if (tailLower !== 0 || tailUpper !== 0) {
      for (let i = 0; i < values.length; i++) {
        if (perState && graph.absorbing[i]) continue;
        lower[i] += tailLower;
        upper[i] += tailUpper;
      }
    }
    return { lower, upper };
  };
  const describe = (result: typeof solved.optimal): PolicyAnalysis => ({
    values: widen(result.values, true),
    reach: reachOf(model.stateCount, result.reach),
    expectedLength: result.length,
    policy: result.policy,
  });
  const exact = solved.steps === horizon;
  return {
    optimal: describe(solved.optimal),
    worst: describe(solved.worst),
    random: describe(solved.random),
    q: widen(solved.q, false),
    isBest: solved.isBest,
    maxGoalReach: solved.maxGoalReach,
    // Term totals of a cut-short induction are those of its steps (used as estimates only).
    termValues: solved.terms.map((values) => ({ lower: values, upper: values })),
    horizon: solved.table,
    exact,
    iterations: solved.steps,
  };
}

/**
 * Probabilities that are exactly 0 or 1 by the graph alone replace their numeric estimates (the
 * "prob0 / prob1" precomputations of probabilistic model checking; Baier and Katoen, Principles of
 * Model Checking, 2008, section 10.1.1): 0 where no terminal of the kind can be reached, 1 where
 * (under a chain) no state that misses it can be reached, or (maximising over choices) where some
 * policy reaches it almost surely. `solve` gives the estimate, and is not called when the graph
 * decides every state.
 */
function withCertainties(
  graph: ModelGraph,
  solve: () => Float64Array,
  kindCode: number,
  how: 'max' | 'chain',
  chain?: Uint8Array,
): Float64Array {
  const { model } = graph;
  const kind = new Uint8Array(model.stateCount);
  for (let s = 0; s < kind.length; s++) kind[s] = model.terminal[s] === kindCode ? 1 : 0;
  const reaches = canReach(graph, kind, chain);
  let sure: Uint8Array;
  if (how === 'max') sure = almostSureReach(graph, kind);
  else {
    const misses = new Uint8Array(model.stateCount);
    for (let s = 0; s < misses.length; s++) misses[s] = reaches[s] ? 0 : 1;
    const canMiss = canReach(graph, misses, chain);
    sure = new Uint8Array(model.stateCount);
    for (let s = 0; s < sure.length; s++) sure[s] = canMiss[s] ? 0 : 1;
  }
  let open = false;
  for (let s = 0; s < model.stateCount && !open; s++) if (!graph.absorbing[s] && reaches[s] && !sure[s]) open = true;
  const out = open ? solve() : new Float64Array(model.stateCount);
  for (let s = 0; s < out.length; s++) {
    if (!reaches[s]) out[s] = 0;
    else if (sure[s]) out[s] = 1;
  }
  return out;
}

function reachOf(n: number, perKind: (Float64Array | undefined)[]): ReachProbabilities {
  const goal = perKind[0] ?? new Float64Array(n);
  const failure = perKind[1] ?? new Float64Array(n);
  const neutral = perKind[2] ?? new Float64Array(n);
  const none = new Float64Array(n);
  for (let s = 0; s < n; s++) none[s] = Math.max(0, 1 - goal[s] - failure[s] - neutral[s]);
  return { goal, failure, neutral, none };
}

/**
 * One number per state from a solution's bounds: the midpoint, or the infinite value. A point
 * whose bounds are wider than the precision target (a solve stopped by its work cap), or that has
 * a finite bound on one side only, is not known: it is NaN, which the fronts print as undetermined.
 */
function pointValues(solution: { lower: Float64Array; upper: Float64Array }, ctx: AnalysisContext): Float64Array {
  const out = new Float64Array(solution.lower.length);
  for (let s = 0; s < out.length; s++) {
    const lower = solution.lower[s];
    const upper = solution.upper[s];
    const width = scaledWidth(lower, upper);
    // The widest bound behind a figure: Analysis.precision covers every printed figure.
    if (Number.isFinite(width) && width > (ctx.widestFigure ?? 0)) ctx.widestFigure = width;
    out[s] = Number.isFinite(width) && width > ctx.precision * (1 + 1e-9) ? NaN : pointOf(lower, upper);
  }
  return out;
}

function pointOf(lower: number, upper: number): number {
  if (lower === upper) return lower;
  if (lower === -Infinity || upper === Infinity) return NaN;
  return (lower + upper) / 2;
}

function startInterval(model: CompiledModel, values: Bounds): Interval {
  let lower = 0;
  let upper = 0;
  for (let i = 0; i < model.startState.length; i++) {
    const p = model.startProb[i];
    if (!(p > 0)) continue;
    lower += p * values.lower[model.startState[i]];
    upper += p * values.upper[model.startState[i]];
  }
  return { lower: Number.isNaN(lower) ? -Infinity : lower, upper: Number.isNaN(upper) ? Infinity : upper };
}

function startPoint(model: CompiledModel, values: Float64Array | Bounds): number {
  if (values instanceof Float64Array) {
    let sum = 0;
    for (let i = 0; i < model.startState.length; i++) {
      const p = model.startProb[i];
      if (p > 0) sum += p * values[model.startState[i]];
    }
    return sum;
  }
  const interval = startInterval(model, values);
  return pointOf(interval.lower, interval.upper);
}

function startReach(model: CompiledModel, reach: ReachProbabilities): ReachAtStart {
  return {
    goal: startPoint(model, reach.goal),
    failure: startPoint(model, reach.failure),
    neutral: startPoint(model, reach.neutral),
    none: startPoint(model, reach.none),
  };
}

/**
 * Shares of the sum of absolute values; infinite totals share the whole among themselves. A total
 * within the precision of 0 (values near 0 are bounded to the absolute precision) cannot be told
 * from 0 and has share 0, so rounding noise of terms that cancel never reads as a share of +-1.
 */
function shareOf(values: Array<{ term: string; value: number }>, precision: number): TermShare[] {
  const infinite = values.filter((v) => v.value === Infinity || v.value === -Infinity).length;
  const counts = (value: number) => Number.isFinite(value) && Math.abs(value) > precision;
  let total = 0;
  for (const v of values) if (counts(v.value)) total += Math.abs(v.value);
  return values.map(({ term, value }) => {
    let share = 0;
    if (infinite > 0) share = Number.isFinite(value) || Number.isNaN(value) ? 0 : Math.sign(value) / infinite;
    else if (total > 0 && counts(value)) share = value / total;
    return { term, value, share };
  });
}

function widestBound(values: Bounds): number {
  let widest = 0;
  for (let s = 0; s < values.lower.length; s++) {
    const width = values.upper[s] - values.lower[s];
    if (Number.isFinite(width) && width > widest) widest = width;
  }
  return widest;
}

function endComponentOf(
  states: Int32Array,
  choices: Int32Array,
  gains: MdpGainClasses,
  i: number,
  sigma: number,
): EndComponent {
  const component: EndComponent = { states, choices };
  const sign = gains.sign[i];
  if (sign === GAIN_POSITIVE || sign === GAIN_NEGATIVE || sign === GAIN_ZERO) {
    component.gainSign = (sigma * sign || 0) as 1 | 0 | -1;
  }
  if (!Number.isNaN(gains.lower[i])) {
    component.gain =
      sigma > 0 ? { lower: gains.lower[i], upper: gains.upper[i] } : { lower: -gains.upper[i], upper: -gains.lower[i] };
  }
  if (sign === GAIN_POSITIVE) component.gainPolicy = Int32Array.from(states, (s) => gains.positivePolicy[s]);
  return component;
}

export type { Analysis } from './types';
