/**
 * The empirical model of a sampled (black-box) model: the transitions seen in its rollouts and in
 * the exploration pass, counted per (state key, action), turned into a CompiledModel (counts to
 * probabilities, mean rewards) that the exact analysis and the rules run on. The sample evidence
 * (counts, reward ranges, unexplored states) travels with the model, so that every finding made
 * on it can say how many samples it rests on and whether it survives the sampling error.
 *
 * Intervals: Wilson's score interval for a probability (E. B. Wilson, "Probable inference, the law
 * of succession, and statistical inference", JASA 22, 1927) and Hoeffding's inequality for a mean
 * of bounded rewards (W. Hoeffding, "Probability inequalities for sums of bounded random
 * variables", JASA 58, 1963).
 */
import type { FindingInput, SampleSupport } from '../findings';
import type { Span } from '../load/span';
import { ModelBuilder, TERMINAL_OF_CODE, type CompiledModel } from './compiled';

/** One outcome seen for a (state key, action) pair. */
export interface CountedOutcome {
  /** Index into TransitionCounts.nodes. */
  node: number;
  count: number;
  rewardSum: number;
  rewardLow: number;
  rewardHigh: number;
  /** Per declared term, the sum of its parts over the `count` samples. */
  termSums: number[];
}

/** One (state key, action) pair and what its samples gave. */
export interface CountedPair {
  node: number;
  action: string;
  samples: number;
  outcomes: CountedOutcome[];
}

/**
 * What the sandbox recorded (sandbox/transition-record.ts): plain data that crosses the worker
 * boundary. A node is a state key together with the terminal kind it was entered with.
 */
export interface TransitionCounts {
  nodes: Array<{ key: string; terminal: number }>;
  /** 1 where the node's actions were listed and each tried (the exploration pass reached it). */
  expanded: number[];
  pairs: CountedPair[];
  /** Episodes that began in each node. */
  starts: Array<{ node: number; count: number }>;
  termNames: string[];
  /** Rollout episodes and steps recorded. */
  episodes: number;
  steps: number;
  /** Samples drawn by the exploration pass (every action of every key a few times). */
  exploreSamples: number;
  /** Samples each pair gets from the exploration pass (at least). */
  tries: number;
  /** True when the exploration pass tried every action of every key it found within its budget. */
  exploreComplete: boolean;
  /** Why the exploration pass stopped before it was complete (its budget, or the key cap). */
  exploreCut?: string;
  /** Set when recording stopped: more distinct keys than the cap, a reward that is not finite, ... */
  stopped?: string;
}

/** The evidence kept beside an empirical CompiledModel, indexed like its choices and outcomes. */
export interface SampleEvidence {
  /** Samples per choice. */
  choiceSamples: Int32Array;
  /** Samples per outcome (its count). */
  outcomeSamples: Int32Array;
  outcomeRewardLow: Float64Array;
  outcomeRewardHigh: Float64Array;
  /** 1 for states seen only as targets, never tried: they end the episode in the model (value 0). */
  unexplored: Uint8Array;
  unexploredCount: number;
  episodes: number;
  steps: number;
  exploreSamples: number;
  tries: number;
  /** Every key seen was tried with every action it offers, and no state is unexplored. */
  complete: boolean;
  /** Terminal kinds (codes) some sampled transition entered. */
  reachedKinds: Set<number>;
  /** Terminal kinds (codes) the model code names. */
  declaredKinds: Set<number>;
  /** Wilson half-width (and Hoeffding relative width) at or under which a finding counts as surviving sampling error. */
  tolerance: number;
}

/** The 95% two-sided normal quantile used by both intervals. */
const Z95 = 1.959963984540054;

/**
 * Wilson's score interval (Wilson 1927) for `successes` out of `trials` at 95%: the set of
 * proportions p for which |x/n - p| <= z sqrt(p(1-p)/n), in closed form.
 */
export function wilsonInterval(successes: number, trials: number, z = Z95): { lower: number; upper: number } {
  if (!(trials > 0)) return { lower: 0, upper: 1 };
  const p = successes / trials;
  const z2 = z * z;
  const denominator = 1 + z2 / trials;
  const centre = (p + z2 / (2 * trials)) / denominator;
  const half = (z / denominator) * Math.sqrt((p * (1 - p)) / trials + z2 / (4 * trials * trials));
  return { lower: Math.max(0, centre - half), upper: Math.min(1, centre + half) };
}

/**
 * Hoeffding's bound (Hoeffding 1963): with probability at least 1 - delta the mean of `n` samples
 * lying in a range of width `range` is within this distance of the true mean.
 */
export function hoeffdingHalfWidth(range: number, n: number, delta = 0.05): number {
  if (!(n > 0)) return Infinity;
  return range * Math.sqrt(Math.log(2 / delta) / (2 * n));
}

export interface EmpiricalOptions {
  discount: number;
  horizon?: number;
  maximize: boolean;
  terms: string[];
  /** Where the states of the model point (the `sample` member's name). */
  span: Span;
  tolerance: number;
  /** Terminal kinds (codes) the model code names (unreachable-terminal compares them with the reached ones). */
  declaredKinds: Set<number>;
}

/**
 * The CompiledModel of the counts, or why there is none. Probabilities are count / samples, rewards
 * the mean over the samples of each outcome. A key seen only as a target is unexplored: it becomes
 * a neutral terminal (value 0) and is marked in `samples.unexplored`.
 */
export function buildEmpiricalModel(
  counts: TransitionCounts,
  options: EmpiricalOptions,
): { model?: CompiledModel; reason?: string } {
  if (counts.stopped) return { reason: counts.stopped };
  if (counts.starts.length === 0) return { reason: 'no episode was recorded' };
  const nodeCount = counts.nodes.length;
  // A key entered with two different terminal kinds (or also as non-terminal) gets one state per kind.
  const kindsOfKey = new Map<string, number>();
  for (const node of counts.nodes) kindsOfKey.set(node.key, (kindsOfKey.get(node.key) ?? 0) + 1);
  const hasChoices = new Uint8Array(nodeCount);
  for (const pair of counts.pairs) hasChoices[pair.node] = 1;
  const builder = new ModelBuilder({
    discount: options.discount,
    horizon: options.horizon,
    maximize: options.maximize,
    terms: options.terms,
  });
  const unexploredList: number[] = [];
  for (let n = 0; n < nodeCount; n++) {
    const { key, terminal } = counts.nodes[n];
    const kind = TERMINAL_OF_CODE[terminal];
    const id = kind && (kindsOfKey.get(key) ?? 0) > 1 ? `${key} (${kind})` : key;
    const unexplored = terminal === 0 && hasChoices[n] === 0;
    if (unexplored) unexploredList.push(n);
    // A string key's id is quoted JSON; its label is the bare string.
    const label = id.startsWith('"') && id.endsWith('"') ? (JSON.parse(id) as string) : undefined;
    builder.addState(id, unexplored ? 'neutral' : kind, options.span, label);
  }
  // Choices go in node order so that the evidence arrays line up with the model's CSR order.
  const pairs = counts.pairs.map((pair, i) => ({ pair, i })).sort((a, b) => a.pair.node - b.pair.node || a.i - b.i);
  const outcomeTotal = pairs.reduce((sum, { pair }) => sum + pair.outcomes.length, 0);
  const choiceSamples = new Int32Array(pairs.length);
  const outcomeSamples = new Int32Array(outcomeTotal);
  const outcomeRewardLow = new Float64Array(outcomeTotal);
  const outcomeRewardHigh = new Float64Array(outcomeTotal);
  let k = 0;
  pairs.forEach(({ pair }, c) => {
    choiceSamples[c] = pair.samples;
    const outcomes = pair.outcomes.map((o) => {
      outcomeSamples[k] = o.count;
      outcomeRewardLow[k] = o.rewardLow;
      outcomeRewardHigh[k] = o.rewardHigh;
      k++;
      return {
        target: o.node,
        probability: o.count / pair.samples,
        reward: o.rewardSum / o.count,
        terms: counts.termNames.map((name, t): [string, number] => [name, (o.termSums[t] ?? 0) / o.count]),
      };
    });
    builder.addChoice(pair.node, pair.action, -1, outcomes);
  });
  const startTotal = counts.starts.reduce((sum, s) => sum + s.count, 0);
  const model = builder.finish(counts.starts.map((s) => ({ state: s.node, probability: s.count / startTotal })));
  const unexplored = new Uint8Array(nodeCount);
  for (const n of unexploredList) unexplored[n] = 1;
  const reachedKinds = new Set<number>();
  for (const node of counts.nodes) if (node.terminal !== 0) reachedKinds.add(node.terminal);
  model.samples = {
    choiceSamples,
    outcomeSamples,
    outcomeRewardLow,
    outcomeRewardHigh,
    unexplored,
    unexploredCount: unexploredList.length,
    episodes: counts.episodes,
    steps: counts.steps,
    exploreSamples: counts.exploreSamples,
    tries: counts.tries,
    complete: counts.exploreComplete && unexploredList.length === 0,
    reachedKinds,
    declaredKinds: options.declaredKinds,
    tolerance: options.tolerance,
  };
  return { model };
}

/**
 * The finding with its sample evidence appended: how many samples it rests on, the least certain
 * probability it uses with its Wilson interval, and whether it survives the sampling error. A
 * finding survives when each probability along its trace has a Wilson half-width at most
 * `tolerance` and each varying reward a Hoeffding half-width at most `tolerance` times its size
 * (at least 1). Without a trace only the rewards count, over the whole model. Common practice, not a
 * theorem: the finding's own margin is not propagated through the analysis.
 */
export function withSampleEvidence(
  model: CompiledModel,
  input: FindingInput,
): FindingInput & { fromSamples: SampleSupport } {
  const samples = model.samples!;
  const used: Array<{ choice: number; outcome: number }> = [];
  const trace = input.trace ?? [];
  if (trace.length > 1) {
    const index = nameIndex(model);
    for (let i = 0; i + 1 < trace.length; i++) {
      const from = index.get(trace[i].state);
      const to = index.get(trace[i + 1].state);
      const action = trace[i].action;
      if (from === undefined || to === undefined || action === undefined) continue;
      for (let c = model.choiceStart[from]; c < model.choiceStart[from + 1]; c++) {
        if (model.actionNames[model.choiceAction[c]] !== action) continue;
        for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++)
          if (model.outcomeTarget[k] === to) used.push({ choice: c, outcome: k });
      }
    }
  }
  let survives = true;
  let fewest = Infinity;
  let worst: { choice: number; outcome: number; half: number } | undefined;
  let pairs: number;
  if (used.length > 0) {
    const seen = new Set<number>();
    for (const step of used) {
      seen.add(step.choice);
      const n = samples.choiceSamples[step.choice];
      const x = samples.outcomeSamples[step.outcome];
      fewest = Math.min(fewest, n);
      const interval = wilsonInterval(x, n);
      const half = (interval.upper - interval.lower) / 2;
      if (!worst || half > worst.half) worst = { ...step, half };
      if (half > samples.tolerance) survives = false;
      if (!rewardKnown(model, step.outcome)) survives = false;
    }
    pairs = seen.size;
  } else {
    // Without a trace the finding is about rewards seen (a sign, a comparison of entries), not
    // about probabilities: only varying rewards can move it.
    pairs = model.choiceCount;
    for (let c = 0; c < model.choiceCount; c++) {
      fewest = Math.min(fewest, samples.choiceSamples[c]);
      for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++)
        if (!rewardKnown(model, k)) survives = false;
    }
  }
  if (!samples.complete) survives = false;
  const total = samples.steps + samples.exploreSamples;
  const parts = [
    `from samples: ${total} sampled steps (${samples.episodes} episodes, ${samples.steps} steps; ${samples.exploreSamples} exploration samples)`,
  ];
  if (Number.isFinite(fewest))
    parts.push(
      `${used.length > 0 ? 'the trace uses' : 'the model has'} ${pairs} state-action pair${pairs === 1 ? '' : 's'}, each tried at least ${fewest} times`,
    );
  if (worst) {
    const n = samples.choiceSamples[worst.choice];
    const x = samples.outcomeSamples[worst.outcome];
    const interval = wilsonInterval(x, n);
    parts.push(
      `least certain probability ${x}/${n}, 95% Wilson interval [${interval.lower.toFixed(3)}, ${interval.upper.toFixed(3)}]`,
    );
  }
  if (samples.unexploredCount > 0)
    parts.push(
      `${samples.unexploredCount} state${samples.unexploredCount === 1 ? '' : 's'} seen but never tried (counted as ending the episode)`,
    );
  parts.push(
    survives
      ? 'it holds within the sampling error'
      : 'it may not survive the sampling error: sample more (more rollouts or a larger exploration budget)',
  );
  const support: SampleSupport = { samples: total, pairs, fewest: Number.isFinite(fewest) ? fewest : 0, survives };
  return { ...input, message: `${input.message} [${parts.join('; ')}]`, fromSamples: support };
}

/** A reward is known when it never varied, or its Hoeffding half-width is within the tolerance of its size. */
function rewardKnown(model: CompiledModel, outcome: number): boolean {
  const samples = model.samples!;
  const range = samples.outcomeRewardHigh[outcome] - samples.outcomeRewardLow[outcome];
  if (range === 0) return true;
  const half = hoeffdingHalfWidth(range, samples.outcomeSamples[outcome]);
  return half <= samples.tolerance * Math.max(1, Math.abs(model.outcomeReward[outcome]));
}

/** State names (labels or ids, as messages and traces show them) to state indices. */
function nameIndex(model: CompiledModel): Map<string, number> {
  const index = new Map<string, number>();
  for (let s = 0; s < model.stateCount; s++) index.set(model.stateLabels?.[s] ?? model.stateIds[s], s);
  return index;
}
