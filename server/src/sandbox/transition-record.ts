/**
 * Counts the transitions of a sampled model per (state key, action), for the empirical model
 * (model/empirical.ts): during the rollouts (as their StepRecorder) and then in an exploration
 * pass that tries every action of every key seen a few times, breadth-first from the keys the
 * rollouts found, so the counts cover what an optimizing agent would do and not only what the
 * random policy happened to do. Runs inside the sandbox worker; draws are seeded, so the counts
 * depend only on the seed and the budget.
 */
import { Xoshiro128 } from '../analysis/rollouts';
import type { CountedOutcome, CountedPair, TransitionCounts } from '../model/empirical';
import {
  actionName,
  createModelRng,
  describeValue,
  drawTransition,
  keyOfState,
  listOf,
  problemOf,
  readReward,
  terminalCode,
  type ModelFunction,
  type ModelFunctions,
  type Progress,
  type RuntimeProblem,
  type StepRecorder,
} from './runtime';

/** How the recording is capped and how much the exploration pass may spend (plain data; it crosses threads). */
export interface RecordOptions {
  /** Distinct keys beyond which recording stops and no empirical model is built. */
  keyCap: number;
  /** Samples the exploration pass gives each (key, action) pair, counting those the rollouts drew. */
  tries: number;
  /** Samples the exploration pass may draw in all. */
  exploreBudget: number;
  /** Rollout steps counted at most: episodes that begin past it are not counted (counting costs a few microseconds a step). */
  countedSteps: number;
}

/** Distinct rewards of one (pair, target) kept as separate outcomes before they are merged into a mean. */
const DISTINCT_REWARDS = 8;

/** One outcome holding the counts, sums and range of several outcomes of the same target. */
function mergeOutcomes(outcomes: CountedOutcome[]): CountedOutcome {
  const merged: CountedOutcome = { ...outcomes[0], termSums: [...outcomes[0].termSums] };
  for (const o of outcomes.slice(1)) {
    merged.count += o.count;
    merged.rewardSum += o.rewardSum;
    merged.rewardLow = Math.min(merged.rewardLow, o.rewardLow);
    merged.rewardHigh = Math.max(merged.rewardHigh, o.rewardHigh);
    for (let t = 0; t < merged.termSums.length; t++) merged.termSums[t] += o.termSums[t];
  }
  return merged;
}

/** The stream of the exploration pass's draws (0 and 1 are the rollouts' model and policy streams). */
const EXPLORE_STREAM = 2;

export class TransitionRecorder implements StepRecorder {
  private readonly nodes: Array<{ key: string; terminal: number }> = [];
  /** Per terminal code (0 to 3), key to node. */
  private readonly nodeIndex = [new Map<string, number>(), new Map<string, number>(), new Map<string, number>(), new Map<string, number>()];
  /** A copy of the first state seen under each non-terminal key: where exploration starts from. */
  private readonly values: unknown[] = [];
  private readonly expanded: number[] = [];
  private readonly pairs: CountedPair[] = [];
  /** Per node, action to pair. */
  private readonly pairIndex: Array<Map<string, number>> = [];
  private readonly starts = new Map<number, number>();
  private current = -1;
  private episodes = 0;
  private steps = 0;
  private exploreSamples = 0;
  private exploreComplete = false;
  /** Why the exploration pass stopped before it was complete. */
  private exploreCut?: string;
  private exploring = false;
  private stopped?: string;
  /** A problem of model code met while recording (the key function, or a call of the exploration pass). */
  problem?: RuntimeProblem;

  constructor(
    private readonly model: ModelFunctions,
    private readonly options: RecordOptions,
    private readonly termNames: string[],
    private readonly progress: Progress,
  ) {}

  begin(state: unknown, code: number): void {
    this.current = -1;
    if (this.stopped || this.steps >= this.options.countedSteps) return;
    this.current = this.node(state, code);
    if (this.current < 0) return;
    this.episodes++;
    this.starts.set(this.current, (this.starts.get(this.current) ?? 0) + 1);
  }

  step(action: string, next: unknown, reward: number, terms: readonly number[], code: number): void {
    if (this.stopped || this.current < 0) return;
    const from = this.current;
    this.current = this.record(from, action, next, reward, terms, code);
    this.steps++;
  }

  /**
   * Tries every action of every non-terminal key until each pair has `tries` samples, in the order
   * the keys were found (new keys join the queue), within the exploration budget.
   */
  explore(seed: number, declaredTerms: string[]): void {
    const { model } = this;
    const rngSource = new Xoshiro128();
    const rng = createModelRng(rngSource);
    const strictTerms = declaredTerms.length > 0;
    const termIndex = strictTerms ? new Map(declaredTerms.map((t, i) => [t, i])) : undefined;
    const terms: number[] = [];
    let phase: ModelFunction = 'actions';
    let state: unknown;
    let action: unknown;
    this.exploring = true;
    try {
      for (let n = 0; n < this.nodes.length && !this.stopped; n++) {
        if (this.nodes[n].terminal !== 0) continue;
        state = this.values[n];
        phase = 'actions';
        this.progress[1] = 2;
        this.progress[0]++;
        const list = listOf(model.actions!(structuredClone(state)), 'the returned action list');
        if (list.length === 0) {
          this.problem = { kind: 'dead-end', phase, message: 'actions() returned no action for a state that is not terminal', state: describeValue(state) };
          this.stopped = 'a state offered no action';
          return;
        }
        for (let a = 0; a < list.length && !this.stopped; a++) {
          action = list[a];
          const name = actionName(action, `action ${a}`);
          const pair = this.pairOf(n, name);
          while (this.pairs[pair].samples < this.options.tries) {
            if (this.exploreSamples >= this.options.exploreBudget) {
              this.exploreCut = `the exploration budget (${this.options.exploreBudget} samples) ran out`;
              return;
            }
            rngSource.seedEpisode(seed, this.exploreSamples, EXPLORE_STREAM);
            phase = model.sample ? 'sample' : 'outcomes';
            this.progress[1] = model.sample ? 5 : 3;
            this.progress[0]++;
            const drawn = drawTransition(model, structuredClone(state), action, rng);
            terms.length = 0;
            const reward = typeof drawn.reward === 'number' ? drawn.reward : readReward(drawn.reward, termIndex, terms, strictTerms, 'the reward');
            let code = terminalCode(drawn.terminal, 'the returned terminal kind');
            if (code === 0 && model.terminal) {
              phase = 'terminal';
              this.progress[1] = 4;
              code = terminalCode(model.terminal(drawn.state), 'the returned terminal kind');
            }
            this.exploreSamples++;
            if (this.record(n, name, drawn.state, reward, terms, code) < 0 || this.exploreCut) return;
          }
        }
        this.expanded[n] = 1;
      }
      this.exploreComplete = !this.stopped && !this.exploreCut;
    } catch (error) {
      this.problem = problemOf(error, phase, { state: describeValue(state), action: action === undefined ? undefined : String(action) });
      this.stopped = `the model code failed while it was explored (${this.problem.message})`;
    }
  }

  result(): TransitionCounts {
    return {
      nodes: this.nodes,
      expanded: this.expanded,
      pairs: this.pairs,
      starts: [...this.starts].map(([node, count]) => ({ node, count })),
      termNames: this.termNames,
      episodes: this.episodes,
      steps: this.steps,
      exploreSamples: this.exploreSamples,
      tries: this.options.tries,
      exploreComplete: this.exploreComplete,
      exploreCut: this.exploreCut,
      stopped: this.stopped,
    };
  }

  /** Counts one transition; returns the target node, or -1 once recording has stopped. */
  private record(from: number, action: string, next: unknown, reward: number, terms: readonly number[], code: number): number {
    if (!Number.isFinite(reward)) {
      this.stopped = `a sampled reward was ${reward}, so no mean reward can be formed`;
      return -1;
    }
    const to = this.node(next, code);
    if (to < 0) return -1;
    const pair = this.pairs[this.pairOf(from, action)];
    pair.samples++;
    // Each reward value of a target is its own outcome (as a spec would list them) up to a few
    // values; a reward that takes more values is one outcome with its mean and range.
    let outcome: CountedOutcome | undefined;
    for (const o of pair.outcomes) {
      if (o.node === to && (o.rewardLow === reward || o.rewardLow !== o.rewardHigh)) {
        outcome = o;
        break;
      }
    }
    if (!outcome) {
      const same = pair.outcomes.filter((o) => o.node === to);
      if (same.length >= DISTINCT_REWARDS) {
        outcome = mergeOutcomes(same);
        pair.outcomes = [...pair.outcomes.filter((o) => o.node !== to), outcome];
      } else {
        outcome = { node: to, count: 0, rewardSum: 0, rewardLow: reward, rewardHigh: reward, termSums: this.termNames.map(() => 0) };
        pair.outcomes.push(outcome);
      }
    }
    outcome.count++;
    outcome.rewardSum += reward;
    if (reward < outcome.rewardLow) outcome.rewardLow = reward;
    if (reward > outcome.rewardHigh) outcome.rewardHigh = reward;
    for (let t = 0; t < outcome.termSums.length; t++) outcome.termSums[t] += terms[t] ?? 0;
    return to;
  }

  private pairOf(node: number, action: string): number {
    const index = this.pairIndex[node];
    let pair = index.get(action);
    if (pair === undefined) {
      pair = this.pairs.length;
      this.pairs.push({ node, action, samples: 0, outcomes: [] });
      index.set(action, pair);
    }
    return pair;
  }

  /** The node of a state entered with terminal kind `code`; -1 when the key cannot be formed or the cap is reached. */
  private node(state: unknown, code: number): number {
    let key: string;
    try {
      this.progress[1] = 6;
      key = keyOfState(this.model, state);
    } catch (error) {
      this.problem = problemOf(error, 'stateKey', { state: describeValue(state) });
      this.stopped = `the state key could not be formed (${this.problem.message})`;
      return -1;
    }
    const index = this.nodeIndex[code];
    const known = index.get(key);
    if (known !== undefined) return known;
    if (this.nodes.length >= this.options.keyCap) {
      // Exploration only stops at the cap; the keys the rollouts found are kept.
      if (this.exploring) {
        this.exploreCut = `exploration reached the cap of ${this.options.keyCap} distinct state keys`;
        return -1;
      }
      this.stopped = `more than ${this.options.keyCap} distinct state keys were sampled (the cap); give the spec a stateKey(state) that maps states to fewer keys, or raise the cap`;
      return -1;
    }
    const n = this.nodes.length;
    this.nodes.push({ key, terminal: code });
    index.set(key, n);
    this.values.push(code === 0 ? structuredClone(state) : undefined);
    this.expanded.push(0);
    this.pairIndex.push(new Map());
    return n;
  }
}
