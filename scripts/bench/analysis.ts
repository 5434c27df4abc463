/**
 * Analysis figures on a seeded random sparse MDP of our own, built in memory: by default
 * 1,000,000 states x 4 actions x 8 outcomes (32M transitions), rewards uniform in [0, 1),
 * discount 0.9. Environment variables BENCH_STATES, BENCH_DISCOUNT, BENCH_FULL=1 (also run the
 * whole analyzeModel), BENCH_BOUNDS_ONLY=1 (skip the sweep-throughput figures) and BENCH_RESERVE=0
 * (let ModelBuilder grow its arrays instead of reserving room) change that. Prints build time,
 * sweep throughput against a plain typed-array sweep, time to value bounds of width 1e-6, and peak
 * memory per phase.
 */
import { resourceUsage } from 'node:process';
import { analyzeModel } from '../../server/src/analysis';
import { maximalEndComponents } from '../../server/src/analysis/end-components';
import { buildModelGraph, expectedRewards } from '../../server/src/analysis/graph';
import {
  COMBINE_MAX,
  singletonNodes,
  sweepBounds,
  sweepEstimate,
  type Operator,
  type SweepStats,
} from '../../server/src/analysis/interval-iteration';
import { stronglyConnectedComponents } from '../../server/src/analysis/scc';
import { solveValues, sortWithinComponents, type AnalysisContext } from '../../server/src/analysis/total-reward';
import { ModelBuilder, type CompiledModel } from '../../server/src/model/compiled';
import { seededRandom } from '../../test/reference/gridworlds';

const ACTIONS = 4;
const OUTCOMES = 8;

/** Builds the random model through ModelBuilder, the same path the spec compiler uses. */
function buildModel(states: number, discount: number): CompiledModel {
  const random = seededRandom(20240601);
  // Room reserved up front as the spec compiler does (BENCH_RESERVE=0 measures the doubling path instead).
  const reserve =
    process.env.BENCH_RESERVE === '0'
      ? undefined
      : { states, choices: states * ACTIONS, outcomes: states * ACTIONS * OUTCOMES };
  const builder = new ModelBuilder({ discount, maximize: true, reserve });
  const nowhere = { start: 0, end: 0 };
  for (let s = 0; s < states; s++) builder.addState(`s${s}`, undefined, nowhere);
  const outcomes = Array.from({ length: OUTCOMES }, () => ({ target: 0, probability: 0, reward: 0 }));
  for (let s = 0; s < states; s++) {
    for (let a = 0; a < ACTIONS; a++) {
      let total = 0;
      for (const o of outcomes) {
        o.target = Math.floor(random() * states);
        o.probability = 0.05 + random();
        o.reward = random();
        total += o.probability;
      }
      for (const o of outcomes) o.probability /= total;
      builder.addChoice(s, ACTIONS === 4 ? ['north', 'south', 'east', 'west'][a] : `a${a}`, -1, outcomes);
    }
  }
  return builder.finish([{ state: 0, probability: 1 }]);
}

const seconds = (start: bigint): number => Number(process.hrtime.bigint() - start) / 1e9;
const millions = (x: number): string => `${(x / 1e6).toFixed(1)} M`;
const megabytes = (bytes: number): string => `${Math.round(bytes / (1 << 20))} MB`;
/** The process's peak resident memory so far, in bytes (it never decreases, so each reading covers the phases before it). */
const peakBytes = (): number => resourceUsage().maxRSS * 1024;
const perTransition = (bytes: number, transitions: number): string =>
  `${megabytes(bytes)}, ${(bytes / transitions).toFixed(1)} B per transition`;

/** A plain Jacobi sweep over the CSR arrays, one vector, no bookkeeping: the baseline. */
function plainSweep(
  model: CompiledModel,
  from: Float64Array,
  to: Float64Array,
  discount: number,
  reward: Float64Array,
): void {
  const { choiceStart, outcomeStart, outcomeTarget, outcomeProb } = model;
  const n = model.stateCount;
  for (let s = 0; s < n; s++) {
    let best = -Infinity;
    for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) {
      let acc = 0;
      for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) acc += outcomeProb[k] * from[outcomeTarget[k]];
      const q = reward[c] + discount * acc;
      if (q > best) best = q;
    }
    to[s] = best;
  }
}

/**
 * Sweep throughput: a plain typed-array sweep (the baseline) against the analysis kernels. Its
 * vectors are local, so they can be collected before the graph preparation that follows.
 */
function measureSweepRates(model: CompiledModel, discount: number, reward: Float64Array): void {
  const rounds = 5;
  const transitions = model.outcomeCount;

  // Baseline: a plain typed-array sweep.
  const a = new Float64Array(model.stateCount);
  const b = new Float64Array(model.stateCount);
  plainSweep(model, a, b, discount, reward);
  let t = process.hrtime.bigint();
  for (let i = 0; i < rounds; i++) plainSweep(model, i % 2 ? b : a, i % 2 ? a : b, discount, reward);
  const plainRate = (rounds * transitions) / seconds(t);
  console.log(`plain typed-array sweep (baseline, one vector): ${millions(plainRate)} transitions/s`);

  // The analysis kernels: one estimate vector, and interleaved lower/upper bounds.
  const order = new Int32Array(model.stateCount);
  for (let s = 0; s < order.length; s++) order[s] = s;
  const nodes = singletonNodes(order);
  const op: Operator = { model, combine: COMBINE_MAX, reward, discount };
  const estimate = new Float64Array(model.stateCount);
  sweepEstimate(op, nodes, estimate);
  t = process.hrtime.bigint();
  for (let i = 0; i < rounds; i++) sweepEstimate(op, nodes, estimate);
  const estimateRate = (rounds * transitions) / seconds(t);
  console.log(
    `analysis sweep, one vector (Gauss-Seidel estimate): ${millions(estimateRate)} transitions/s (${((100 * estimateRate) / plainRate).toFixed(0)}% of baseline)`,
  );
  const bounds = new Float64Array(2 * model.stateCount);
  for (let s = 0; s < model.stateCount; s++) bounds[2 * s + 1] = 1 / (1 - discount);
  const stats: SweepStats = { relativeWidth: 0, lowerViolations: 0, upperViolations: 0, crossed: false };
  sweepBounds(op, nodes, bounds, true, true, stats);
  t = process.hrtime.bigint();
  for (let i = 0; i < rounds; i++) sweepBounds(op, nodes, bounds, true, true, stats);
  const boundsRate = (rounds * transitions) / seconds(t);
  console.log(
    `analysis sweep, lower and upper bounds together: ${millions(boundsRate)} transitions/s (${millions(2 * boundsRate)} bound updates/s)`,
  );
}

export async function run(): Promise<void> {
  const states = Number(process.env.BENCH_STATES ?? 1_000_000);
  const discount = Number(process.env.BENCH_DISCOUNT ?? 0.9);
  console.log(
    `random sparse MDP: ${states} states x ${ACTIONS} actions x ${OUTCOMES} outcomes, rewards in [0, 1), discount ${discount} (seeded, our own)`,
  );

  let t = process.hrtime.bigint();
  const model = buildModel(states, discount);
  const transitions = model.outcomeCount;
  console.log(
    `compile (ModelBuilder to CSR arrays): ${seconds(t).toFixed(2)} s (target < 10 s), ${millions(transitions)} transitions`,
  );
  console.log(`peak memory after compile: ${perTransition(peakBytes(), transitions)}`);

  const reward = expectedRewards(model);
  if (process.env.BENCH_BOUNDS_ONLY !== '1') measureSweepRates(model, discount, reward);

  // Time to sound bounds of width 1e-6 for V* (graph preparation included).
  // Prepared as analyzeModel does: the whole graph's SCCs also serve as the first end-component round.
  t = process.hrtime.bigint();
  const graph = buildModelGraph(model);
  const live = new Uint8Array(model.stateCount).fill(1);
  const fullScc = stronglyConnectedComponents(model, live);
  sortWithinComponents(fullScc, graph);
  const mecs = maximalEndComponents(graph, undefined, undefined, fullScc);
  const prepared = seconds(t);
  const peakAfterGraph = peakBytes();
  const ctx: AnalysisContext = { model, graph, mecs, fullScc, precision: 1e-6, maxSweeps: 100_000, gainBudget: 2e8 };
  t = process.hrtime.bigint();
  const solution = solveValues(ctx, { combine: COMBINE_MAX, reward, discount });
  const solved = seconds(t);
  let widest = 0;
  for (let s = 0; s < model.stateCount; s++) widest = Math.max(widest, solution.upper[s] - solution.lower[s]);
  console.log(
    `graph preparation (predecessors, SCCs, end components): ${prepared.toFixed(2)} s, ${mecs.count} end component(s)`,
  );
  console.log(`peak memory after graph preparation: ${perTransition(peakAfterGraph, transitions)}`);
  console.log(
    `time to V* bounds of width <= 1e-6: ${solved.toFixed(2)} s, ${solution.sweeps} sweeps, widest bound ${widest.toExponential(2)}, V*(start) in [${solution.lower[0].toFixed(6)}, ${solution.upper[0].toFixed(6)}]`,
  );

  if (process.env.BENCH_FULL === '1') {
    t = process.hrtime.bigint();
    const analysis = analyzeModel(model, { precision: 1e-6 });
    console.log(
      `whole analyzeModel (optimal, worst, random, reach, lengths, Q): ${seconds(t).toFixed(2)} s, ${analysis.iterations} sweeps`,
    );
  }

  const memory = process.memoryUsage();
  console.log(
    `memory now: rss ${megabytes(memory.rss)}, heap ${megabytes(memory.heapUsed)}, typed arrays ${megabytes(memory.arrayBuffers)}`,
  );
  console.log(`peak memory (maxRSS): ${perTransition(peakBytes(), transitions)} (target <= 40 B per transition)`);
}
