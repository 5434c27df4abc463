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
  private readonly nodeIndex = [
    new Map<string, number>(),
    new Map<string, number>(),
    new Map<string, number>(),
    new Map<string, number>(),
  ];
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

  begin(state: unknown, code: number, key?: string): void {
    this.current = -1;
    if (this.stopped || this.steps >= this.options.countedSteps) return;
    this.current = this.node(state, code, key);
    if (this.current < 0) return;
    this.episodes++;
    this.starts.set(this.current, (this.starts.get(this.current) ?? 0) + 1);
  }

  step(action: string, next: unknown, reward: number, terms: readonly number[], code: number, key?: string): void {
    if (this.stopped || this.current < 0) return;
    const from = this.current;
    this.current = this.record(from, action, next, reward, terms, code, key);
    this.steps++;
  }

  /**
   * Feeds the recorder the logged rollouts of a later range of episodes (--jobs N), as if this
   * process had rolled them out itself: the same calls in the same order give the same counts.
   */
  replay(log: TrajectoryLog): void {
    const terms: number[] = [];
    const width = this.termNames.length;
    const fail = (problem: RuntimeProblem) => {
      this.problem = problem;
      this.stopped = `the state key could not be formed (${problem.message})`;
    };
    const episodes = log.beginNode.length;
    // A start whose key failed is the episode after the last logged one.
    for (let e = 0; e <= episodes; e++) {
      const failsAt = log.failure?.episode === e ? log.failure.step : -2;
      if (failsAt === -1) {
        this.current = -1;
        if (!this.stopped && this.steps < this.options.countedSteps) fail(log.failure!.problem);
        return;
      }
      if (e === episodes) return;
      const start = log.beginNode[e];
      this.begin(log.nodeValue[start], log.nodeCode[start], log.nodeKey[start]);
      const last = failsAt >= 0 ? log.episodeStart[e] + failsAt : log.episodeStart[e + 1];
      for (let k = log.episodeStart[e]; k < last; k++) {
        const to = log.stepNode[k];
        terms.length = 0;
        for (let t = 0; t < width; t++) terms.push(log.stepTerms[k * width + t]);
        const reward = log.stepReward[k];
        // A non-finite reward stops recording before any key is formed, so its target is not logged.
        if (to < 0) this.step(log.actions[log.stepAction[k]], undefined, reward, terms, 0, '');
        else
          this.step(
            log.actions[log.stepAction[k]],
            log.nodeValue[to],
            reward,
            terms,
            log.nodeCode[to],
            log.nodeKey[to],
          );
      }
      if (failsAt >= 0) {
        if (!this.stopped && this.current >= 0) {
          fail(log.failure!.problem);
          this.current = -1;
          this.steps++;
        }
        return;
      }
    }
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
          this.problem = {
            kind: 'dead-end',
            phase,
            message: 'actions() returned no action for a state that is not terminal',
            state: describeValue(state),
          };
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
            const reward =
              typeof drawn.reward === 'number'
                ? drawn.reward
                : readReward(drawn.reward, termIndex, terms, strictTerms, 'the reward');
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
      this.problem = problemOf(error, phase, {
        state: describeValue(state),
        action: action === undefined ? undefined : String(action),
      });
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
  private record(
    from: number,
    action: string,
    next: unknown,
    reward: number,
    terms: readonly number[],
    code: number,
    key?: string,
  ): number {
    if (!Number.isFinite(reward)) {
      this.stopped = `a sampled reward was ${reward}, so no mean reward can be formed`;
      return -1;
    }
    const to = this.node(next, code, key);
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
        outcome = {
          node: to,
          count: 0,
          rewardSum: 0,
          rewardLow: reward,
          rewardHigh: reward,
          termSums: this.termNames.map(() => 0),
        };
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
  private node(state: unknown, code: number, given?: string): number {
    let key: string;
    try {
      this.progress[1] = 6;
      key = given ?? keyOfState(this.model, state);
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

/**
 * The counted part of a range of rollouts as plain data (--jobs N): the child of a later range
 * logs what its recorder would have been fed, with keys already formed, and the child of the first
 * range replays the logs in episode order (`TransitionRecorder.replay`) before it explores.
 */
export interface TrajectoryLog {
  /** Distinct (key, terminal kind) nodes in the order first logged, with a copy of the first state of each non-terminal one. */
  nodeKey: string[];
  nodeCode: number[];
  nodeValue: unknown[];
  /** Per logged episode: its start node and its first step; one more entry in episodeStart. */
  beginNode: Int32Array;
  episodeStart: Int32Array;
  actions: string[];
  stepAction: Int32Array;
  /** The target node of each step; -1 after a non-finite reward (recording stops there). */
  stepNode: Int32Array;
  stepReward: Float64Array;
  /** The declared terms' parts of each step's reward, `termCount` per step. */
  stepTerms: Float64Array;
  /** A key that could not be formed: at the start (step -1) or at a step of a logged episode. */
  failure?: { episode: number; step: number; problem: RuntimeProblem };
}

/**
 * A StepRecorder that logs instead of counting. It stops where the first range's recorder would
 * certainly stop too: after `countedSteps` steps of its own, a key that cannot be formed, a
 * non-finite reward, or more distinct keys than the cap.
 */
export class TrajectoryLogger implements StepRecorder {
  private readonly nodeIndex = [
    new Map<string, number>(),
    new Map<string, number>(),
    new Map<string, number>(),
    new Map<string, number>(),
  ];
  private readonly log = { nodeKey: [] as string[], nodeCode: [] as number[], nodeValue: [] as unknown[] };
  private readonly beginNode: number[] = [];
  private readonly episodeStart: number[] = [];
  private readonly actionIndex = new Map<string, number>();
  private readonly actions: string[] = [];
  private readonly stepAction: number[] = [];
  private readonly stepNode: number[] = [];
  private readonly stepReward: number[] = [];
  private readonly stepTerms: number[] = [];
  private failure?: TrajectoryLog['failure'];
  private done = false;
  private logging = false;

  constructor(
    private readonly model: ModelFunctions,
    private readonly options: RecordOptions,
    private readonly termCount: number,
    private readonly progress: Progress,
  ) {}

  begin(state: unknown, code: number): void {
    this.logging = false;
    if (this.done || this.stepNode.length >= this.options.countedSteps) {
      this.done = true;
      return;
    }
    const node = this.node(state, code, -1);
    if (node < 0) return;
    this.beginNode.push(node);
    this.episodeStart.push(this.stepNode.length);
    this.logging = true;
  }

  step(action: string, next: unknown, reward: number, terms: readonly number[], code: number): void {
    if (this.done || !this.logging) return;
    let known = this.actionIndex.get(action);
    if (known === undefined) {
      known = this.actions.length;
      this.actions.push(action);
      this.actionIndex.set(action, known);
    }
    let to = -1;
    if (Number.isFinite(reward)) {
      to = this.node(next, code, this.stepNode.length - this.episodeStart[this.episodeStart.length - 1]);
      if (to < 0) return;
    } else this.done = true;
    this.stepAction.push(known);
    this.stepNode.push(to);
    this.stepReward.push(reward);
    for (let t = 0; t < this.termCount; t++) this.stepTerms.push(terms[t] ?? 0);
  }

  result(): TrajectoryLog {
    const episodeStart = Int32Array.from([...this.episodeStart, this.stepNode.length]);
    return {
      ...this.log,
      beginNode: Int32Array.from(this.beginNode),
      episodeStart,
      actions: this.actions,
      stepAction: Int32Array.from(this.stepAction),
      stepNode: Int32Array.from(this.stepNode),
      stepReward: Float64Array.from(this.stepReward),
      stepTerms: Float64Array.from(this.stepTerms),
      failure: this.failure,
    };
  }

  /** The node of a state; -1 (and the log ends) when its key cannot be formed. `step` is where in the episode (-1: its start). */
  private node(state: unknown, code: number, step: number): number {
    let key: string;
    try {
      this.progress[1] = 6;
      key = keyOfState(this.model, state);
    } catch (error) {
      this.failure = {
        episode: step < 0 ? this.beginNode.length : this.beginNode.length - 1,
        step,
        problem: problemOf(error, 'stateKey', { state: describeValue(state) }),
      };
      this.done = true;
      return -1;
    }
    const index = this.nodeIndex[code];
    const known = index.get(key);
    if (known !== undefined) return known;
    const n = this.log.nodeKey.length;
    this.log.nodeKey.push(key);
    this.log.nodeCode.push(code);
    this.log.nodeValue.push(code === 0 ? structuredClone(state) : undefined);
    index.set(key, n);
    // Past the cap the first range's recorder has stopped: more keys than this were seen by then.
    if (n + 1 > this.options.keyCap) this.done = true;
    return n;
  }
}
