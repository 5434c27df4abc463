/**
 * Model-free control within a budget of sampled steps: learns action values Q(s, a) of a model that
 * can only be sampled, then measures the greedy policy of the learned Q on fresh seeded episodes.
 *
 * Methods, after Sutton and Barto, "Reinforcement Learning: An Introduction", 2nd ed. (2018):
 * - Q-learning (section 6.5): Q(s, a) += alpha (r + discount max_a' Q(s', a') - Q(s, a)), behaving
 *   epsilon-greedily. The step size of the n-th update of a pair is n^-0.8, the polynomial rate of
 *   Even-Dar and Mansour, "Learning rates for Q-learning" (JMLR 5, 2003), which converges where the
 *   plain average 1/n is exponentially slow in 1 / (1 - discount).
 * - On-policy Monte Carlo control with epsilon-soft policies (section 5.4), every-visit or
 *   first-visit: Q(s, a) is the running average of the returns that followed (s, a).
 *
 * States are told apart by `keyOfState` (runtime.ts): the spec's `stateKey(state)` when it has one,
 * else the canonical key, so learning, the empirical model and the rollouts agree on "the same state". With a horizon the time step is part of the learning state, so the
 * learned policy may depend on the steps left, as the optimal one does. Random numbers: the
 * training episodes use streams 2 (model) and 3 (policy) of the seed, so they are never the
 * episodes the greedy policy is measured on; those use streams 0 and 1, the same as the random
 * policy's rollouts, so both policies meet the same model draws (common random numbers).
 *
 * Like runtime.ts this runs inside the sandbox worker and must not import anything of the host.
 */
import {
  effectiveStepCap,
  END_NONE,
  END_STEP_CAP,
  summarizeEpisodes,
  Xoshiro128,
  type EpisodeRecords,
} from '../analysis/rollouts';
import type {
  LearningMethod,
  LearningSummary,
  LearnedAction,
  LearnedState,
  RolloutStats,
} from '../analysis/rollout-stats';
import { DEFAULT_CONFIG } from '../config';
import type { CompiledModel } from '../model/compiled';
import {
  actionName,
  createModelRng,
  describeValue,
  drawOutcome,
  drawStart,
  keyOfState,
  listOf,
  MalformedValue,
  problemOf,
  readReward,
  terminalCode,
  type ModelFunction,
  type ModelFunctions,
  type Progress,
  type RuntimeProblem,
} from './runtime';

/** What learning may spend and how; every field is plain data, so it crosses threads as is. */
export interface LearningSettings {
  method: LearningMethod;
  /** Training budget: learning stops when either runs out. */
  episodes: number;
  steps: number;
  /** Exploration rate of the epsilon-greedy (Q-learning) or epsilon-soft (Monte Carlo) behaviour. */
  epsilon: number;
  /** Monte Carlo only: average the return after the first visit of a pair in an episode, or after every visit. */
  firstVisit: boolean;
  /** Fresh episodes the greedy policy is measured on. */
  evaluationEpisodes: number;
  /** Episodes per start action for the decision "is the best start action really best". */
  decisionEpisodes: number;
}

/** The config's default budget (config.ts), a thousand measured episodes and 200 per start action for the decision. */
export const DEFAULT_LEARNING: LearningSettings = {
  method: 'q-learning',
  episodes: DEFAULT_CONFIG.learning.episodes,
  steps: DEFAULT_CONFIG.learning.steps,
  epsilon: DEFAULT_CONFIG.learning.epsilon,
  firstVisit: DEFAULT_CONFIG.learning.firstVisit,
  evaluationEpisodes: 1000,
  decisionEpisodes: 200,
};

/** Steps of the greedy policy's first measured episode kept as its path. */
const PATH_STEPS = 200;
/** Exponent of the step size n^-ALPHA_EXPONENT of Q-learning (Even-Dar and Mansour 2003). */
const ALPHA_EXPONENT = 0.8;
/** States whose learned values are kept for the output, the most visited first. */
const KEPT_STATES = 50;
/** Learning states kept for the literals of the source (with a horizon a key has one per time step). */
const SOURCE_STATES = 4096;

export interface LearnRun {
  summary: LearningSummary;
  /** The greedy policy's fresh episodes. */
  evaluation: EpisodeRecords;
  problem?: RuntimeProblem;
}

/**
 * What learning needs of a model: a start, a state's action count, and one sampled step. States
 * are small integer ids the sampler hands out; outputs are written to fields to spare an object per step.
 */
export interface LearningSampler {
  /** Reseeds the model's random numbers for one episode. */
  seedEpisode(seed: number, episode: number, stream: number): void;
  /** Draws a start state: sets `state`, and `end` (END_* code, END_NONE when the start is not terminal). */
  start(): void;
  actionCount(state: number): number;
  /** One sampled step: sets `state`, `reward` and `end`. */
  step(state: number, action: number): void;
  state: number;
  reward: number;
  end: number;
  keyOf(state: number): string;
  actionNameOf(state: number, action: number): string;
  /** Distinct states met so far. */
  readonly stateCount: number;
}

export interface LearnOptions {
  settings: LearningSettings;
  seed: number;
  discount: number;
  horizon?: number;
  /** Cap on steps per episode without a horizon. */
  stepCap: number;
  maximize: boolean;
  /** Keys whose learned values are kept whatever their visits (the literals of the source; summary.sourceStates). */
  watchKeys?: string[];
}

/** Growable per-learning-state tables: action slots, Q and visit counts. */
class Table {
  slotStart = new Int32Array(64);
  slotCount = new Int32Array(64);
  stateVisits = new Int32Array(64);
  sampleState = new Int32Array(64);
  stepOf = new Int32Array(64);
  q = new Float64Array(256);
  visits = new Int32Array(256);
  size = 0;
  slots = 0;

  /** A table holding another process's learned states; their sample states are unknown here (-1). */
  static of(learned: LearnedTable): Table {
    const table = new Table();
    const size = learned.stateKey.length;
    const capacity = Math.max(64, size);
    table.slotStart = new Int32Array(capacity);
    table.slotStart.set(learned.slotStart.subarray(0, size));
    table.slotCount = new Int32Array(capacity);
    for (let id = 0; id < size; id++) table.slotCount[id] = learned.slotStart[id + 1] - learned.slotStart[id];
    table.stateVisits = new Int32Array(capacity);
    table.sampleState = new Int32Array(capacity).fill(-1);
    table.stepOf = new Int32Array(capacity);
    table.stepOf.set(learned.stateStep);
    table.slots = learned.q.length;
    table.q = new Float64Array(Math.max(256, table.slots));
    table.q.set(learned.q);
    table.visits = new Int32Array(table.q.length);
    table.visits.set(learned.visits);
    table.size = size;
    return table;
  }

  add(sampleState: number, step: number, actions: number): number {
    const id = this.size++;
    if (id >= this.slotStart.length) {
      const grow = <T extends Int32Array>(a: T): T => {
        const b = new Int32Array(a.length * 2) as T;
        b.set(a);
        return b;
      };
      this.slotStart = grow(this.slotStart);
      this.slotCount = grow(this.slotCount);
      this.stateVisits = grow(this.stateVisits);
      this.sampleState = grow(this.sampleState);
      this.stepOf = grow(this.stepOf);
    }
    if (this.slots + actions > this.q.length) {
      const length = Math.max(this.q.length * 2, this.slots + actions);
      const q = new Float64Array(length);
      q.set(this.q);
      this.q = q;
      const visits = new Int32Array(length);
      visits.set(this.visits);
      this.visits = visits;
    }
    this.slotStart[id] = this.slots;
    this.slotCount[id] = actions;
    this.sampleState[id] = sampleState;
    this.stepOf[id] = step;
    this.slots += actions;
    return id;
  }
}

/**
 * The learned table as plain data: what a child that did not train needs to measure the greedy
 * policy (the `measure` job of --jobs N). Learning states refer to keys, never to sampler ids,
 * since each process numbers the states it meets in its own order.
 */
export interface LearnedTable {
  /** Keys of the states met in training, in the order first met. */
  keys: string[];
  /** Per learning state: the index of its key in `keys`. */
  stateKey: Int32Array;
  /** Per learning state: steps taken before it (0 without a horizon). */
  stateStep: Int32Array;
  /** Per learning state: its first slot; one more entry than there are states. */
  slotStart: Int32Array;
  q: Float64Array;
  visits: Int32Array;
}

/** What the greedy policy did on a range of measured episodes, beside their records. */
export interface MeasuredPart {
  records: EpisodeRecords;
  unlearnedSteps: number;
  /** Keys met that training never met, in the order first met. */
  newKeys: string[];
  /** Learning states added while measuring (no visits), in the order first met. */
  newStates: LearnedState[];
  /** The first episode's path, when the range starts at episode 0. */
  path?: LearningSummary['path'];
}

/** What training leaves for the host when measuring is split across children. */
export interface TrainedPart {
  table: LearnedTable;
  spent: { episodes: number; steps: number };
  /** The most visited learning states of the training table (see keptStates). */
  kept: LearnedState[];
  /** The learned values at the watched keys (LearnOptions.watchKeys). */
  watched?: LearnedState[];
}

/**
 * One learning run in phases: `train` within the budget, `measure` the greedy policy on a range of
 * fresh episodes, `decide` whether the best start action is really best. `learnWithSampler` runs
 * them in turn; with --jobs N the host runs each phase in its own child and joins them with
 * `joinLearning`, which gives the same figures because every phase seeds its draws per episode.
 */
export class Learner {
  private readonly table: Table;
  private readonly sign: number;
  private readonly limit: number;
  // Learning state of (sample state, time): the sample state itself without a horizon.
  private readonly byTime = new Map<number, number>();
  private readonly direct: number[] = [];
  private readonly policy = new Xoshiro128();
  /** A table taken from another process: its states by key index and time, and its keys. */
  private readonly imported?: { size: number; keys: Map<string, number>; states: Map<number, number> };
  episodes = 0;
  steps = 0;
  unlearnedSteps = 0;
  private fixedStart = -1;
  private startVaries = false;
  private startEnds = false;

  constructor(
    private readonly sampler: LearningSampler,
    private readonly options: LearnOptions,
    learned?: LearnedTable,
  ) {
    this.sign = options.maximize ? 1 : -1;
    this.limit = options.horizon ?? effectiveStepCap(options.discount, options.stepCap);
    this.table = learned ? Table.of(learned) : new Table();
    if (learned) {
      const keys = new Map<string, number>();
      learned.keys.forEach((key, i) => keys.set(key, i));
      const states = new Map<number, number>();
      const span = (options.horizon ?? 0) + 1;
      for (let id = 0; id < learned.stateKey.length; id++)
        states.set(learned.stateKey[id] * span + learned.stateStep[id], id);
      this.imported = { size: learned.stateKey.length, keys, states };
    }
  }

  private learningState(state: number, t: number): number {
    const horizon = this.options.horizon;
    if (horizon === undefined) {
      const known = this.direct[state];
      if (known !== undefined) return known;
      const id = this.importedState(state, 0) ?? this.table.add(state, 0, this.sampler.actionCount(state));
      this.direct[state] = id;
      return id;
    }
    const compound = state * (horizon + 1) + t;
    const known = this.byTime.get(compound);
    if (known !== undefined) return known;
    const id = this.importedState(state, t) ?? this.table.add(state, t, this.sampler.actionCount(state));
    this.byTime.set(compound, id);
    return id;
  }

  /** The imported learning state of a sampler state at time t; its actions are asked so that it can be stepped from. */
  private importedState(state: number, t: number): number | undefined {
    if (!this.imported) return undefined;
    const key = this.imported.keys.get(this.sampler.keyOf(state));
    const id = key === undefined ? undefined : this.imported.states.get(key * ((this.options.horizon ?? 0) + 1) + t);
    if (id !== undefined) this.sampler.actionCount(state);
    return id;
  }

  /** The action with the largest sign * Q; ties broken at random. `triedOnly` skips untried actions. */
  private greedy(id: number, triedOnly: boolean): number {
    const { table, policy, sign } = this;
    const first = table.slotStart[id];
    const count = table.slotCount[id];
    let best = -1;
    let bestValue = -Infinity;
    let ties = 0;
    for (let a = 0; a < count; a++) {
      if (triedOnly && table.visits[first + a] === 0) continue;
      const value = sign * table.q[first + a];
      if (value > bestValue) {
        bestValue = value;
        best = a;
        ties = 1;
      } else if (value === bestValue && policy.nextInt(++ties) === 0) {
        best = a;
      }
    }
    return best;
  }

  private behave(id: number): number {
    const count = this.table.slotCount[id];
    if (this.policy.nextFloat() < this.options.settings.epsilon) return this.policy.nextInt(count);
    return this.greedy(id, false);
  }

  /** Learns Q within the budget (training streams 2 and 3 of each episode). */
  train(): void {
    const { sampler, table, policy, sign, limit } = this;
    const { settings, seed, discount, horizon } = this.options;
    const trail = { slot: [] as number[], reward: [] as number[] };
    let seenEpisode = new Int32Array(0);
    while (this.episodes < settings.episodes && this.steps < settings.steps) {
      const episode = this.episodes++;
      sampler.seedEpisode(seed, episode, 2);
      policy.seedEpisode(seed, episode, 3);
      sampler.start();
      let end = sampler.end;
      let state = sampler.state;
      // The start is fixed when every training episode drew the same start state.
      if (episode === 0) {
        this.fixedStart = state;
        this.startEnds = end !== END_NONE;
      } else if (state !== this.fixedStart) this.startVaries = true;
      let t = 0;
      trail.slot.length = 0;
      trail.reward.length = 0;
      let cut = false;
      while (end === END_NONE && t < limit) {
        if (this.steps >= settings.steps) {
          cut = true;
          break;
        }
        const id = this.learningState(state, t);
        table.stateVisits[id]++;
        const a = this.behave(id);
        const slot = table.slotStart[id] + a;
        sampler.step(state, a);
        this.steps++;
        t++;
        const reward = sampler.reward;
        end = sampler.end;
        const next = sampler.state;
        if (settings.method === 'q-learning') {
          let target = reward;
          // A step cap (no horizon) is a cut, not an end: the value of the state reached still counts.
          if (end === END_NONE && (t < limit || horizon === undefined)) {
            const nextId = this.learningState(next, horizon === undefined ? 0 : t);
            const first = table.slotStart[nextId];
            let best = -Infinity;
            for (let b = 0; b < table.slotCount[nextId]; b++) best = Math.max(best, sign * table.q[first + b]);
            target += discount * sign * best;
          }
          const n = ++table.visits[slot];
          table.q[slot] += (target - table.q[slot]) * Math.pow(n, -ALPHA_EXPONENT);
        } else {
          trail.slot.push(slot);
          trail.reward.push(reward);
        }
        state = next;
      }
      if (settings.method === 'monte-carlo' && !cut) {
        if (seenEpisode.length < table.slots) {
          const grown = new Int32Array(Math.max(table.q.length, 64)).fill(-1);
          grown.set(seenEpisode);
          seenEpisode = grown;
        }
        // A pair's first visit in this episode is the step at which seenEpisode first takes the episode's number.
        const isFirst = new Uint8Array(trail.slot.length);
        for (let i = 0; i < trail.slot.length; i++) {
          const slot = trail.slot[i];
          isFirst[i] = seenEpisode[slot] === episode ? 0 : 1;
          seenEpisode[slot] = episode;
        }
        let g = 0;
        for (let i = trail.slot.length - 1; i >= 0; i--) {
          g = trail.reward[i] + discount * g;
          if (settings.firstVisit && isFirst[i] === 0) continue;
          const slot = trail.slot[i];
          const n = ++table.visits[slot];
          table.q[slot] += (g - table.q[slot]) / n;
        }
      }
    }
  }

  /** The greedy action of the learned Q; a state without a tried action gets a random one (counted as unlearned). */
  private readonly greedyAction = (state: number, t: number): number => {
    const id = this.learningState(state, t);
    const a = this.greedy(id, true);
    if (a >= 0) return a;
    this.unlearnedSteps++;
    return this.policy.nextInt(this.table.slotCount[id]);
  };

  /** The greedy policy on `count` fresh episodes from `first` (streams 0 and 1, never used in training). */
  measure(first: number, count: number, path?: LearningSummary['path']): EpisodeRecords {
    const { horizon, discount, seed } = this.options;
    return rolloutGreedy(
      this.sampler,
      count,
      seed,
      first,
      this.limit,
      horizon,
      discount,
      this.greedyAction,
      this.policy,
      undefined,
      path,
    );
  }

  /** Learning states so far (training and measuring). */
  get learningStates(): number {
    return this.table.size;
  }

  /** The start state(s) first, then the most visited states, with each action's Q and visit count. */
  keptStates(): LearnedState[] {
    return keptStates(this.sampler, this.table, this.options.horizon !== undefined);
  }

  /** The learned values of the watched keys' learning states that have a tried action, in table order. */
  watchedStates(): LearnedState[] | undefined {
    const { sampler, table } = this;
    const keys = this.options.watchKeys;
    if (!keys) return undefined;
    const watched = new Set(keys);
    const kept: LearnedState[] = [];
    const timed = this.options.horizon !== undefined;
    for (let id = 0; id < table.size && kept.length < SOURCE_STATES; id++) {
      if (table.sampleState[id] < 0 || !watched.has(sampler.keyOf(table.sampleState[id]))) continue;
      let tried = false;
      for (let k = table.slotStart[id]; k < table.slotStart[id] + table.slotCount[id]; k++)
        if (table.visits[k] > 0) tried = true;
      if (tried) kept.push(keptState(sampler, table, id, timed));
    }
    return kept;
  }

  /** The training table as plain data (keys in the order training met them). */
  exportTable(): LearnedTable {
    const { sampler, table } = this;
    const keys: string[] = [];
    for (let s = 0; s < sampler.stateCount; s++) keys.push(sampler.keyOf(s));
    const slotStart = new Int32Array(table.size + 1);
    slotStart.set(table.slotStart.subarray(0, table.size));
    slotStart[table.size] = table.slots;
    return {
      keys,
      stateKey: table.sampleState.slice(0, table.size),
      stateStep: table.stepOf.slice(0, table.size),
      slotStart,
      q: table.q.slice(0, table.slots),
      visits: table.visits.slice(0, table.slots),
    };
  }

  /** What measuring met beyond an imported table: new keys and new learning states, in the order first met. */
  measuredBeyond(records: EpisodeRecords, path?: LearningSummary['path']): MeasuredPart {
    const { sampler, table, imported } = this;
    const newKeys: string[] = [];
    for (let s = 0; s < sampler.stateCount; s++) {
      const key = sampler.keyOf(s);
      if (!imported?.keys.has(key)) newKeys.push(key);
    }
    const timed = this.options.horizon !== undefined;
    const newStates: LearnedState[] = [];
    for (let id = imported?.size ?? 0; id < table.size; id++) newStates.push(keptState(sampler, table, id, timed));
    return { records, unlearnedSteps: this.unlearnedSteps, newKeys, newStates, path };
  }

  /** Whether the best start action is really best (summary.decision), or why that is not asked. */
  decide(summary: Pick<LearningSummary, 'decision' | 'noDecision'>, measuredEpisodes: number): void {
    if (this.startVaries) summary.noDecision = 'the start state varies between episodes';
    else if (this.fixedStart < 0 || this.episodes === 0) summary.noDecision = 'no training episode ran';
    else if (this.startEnds) summary.noDecision = 'the start state is terminal';
    else
      decideStart(
        this.sampler,
        this.table,
        this.options,
        this.limit,
        measuredEpisodes,
        this.learningState(this.fixedStart, 0),
        this.greedyAction,
        this.policy,
        summary,
      );
  }
}

/** The summary's fields that do not depend on what was measured. */
function summaryHead(
  settings: LearningSettings,
  spent: { episodes: number; steps: number },
): Pick<LearningSummary, 'method' | 'visits' | 'epsilon' | 'budget' | 'spent'> {
  return {
    method: settings.method,
    visits: settings.method === 'monte-carlo' ? (settings.firstVisit ? 'first' : 'every') : undefined,
    epsilon: settings.epsilon,
    budget: { episodes: settings.episodes, steps: settings.steps },
    spent,
  };
}

/**
 * Learns Q within the budget, then rolls out the greedy policy of the learned Q. Errors of the
 * sampler (model code) propagate; `learnModel` turns them into a RuntimeProblem.
 */
export function learnWithSampler(
  sampler: LearningSampler,
  options: LearnOptions,
): { summary: LearningSummary; evaluation: EpisodeRecords } {
  const learner = new Learner(sampler, options);
  learner.train();
  const path: LearningSummary['path'] = { keys: [], actions: [], truncated: false };
  const evaluation = learner.measure(0, options.settings.evaluationEpisodes, path);
  const summary: LearningSummary = {
    ...summaryHead(options.settings, { episodes: learner.episodes, steps: learner.steps }),
    distinctKeys: sampler.stateCount,
    learningStates: learner.learningStates,
    unlearnedSteps: learner.unlearnedSteps,
    path,
    states: learner.keptStates(),
  };
  const watched = learner.watchedStates();
  if (watched) summary.sourceStates = watched;
  learner.decide(summary, options.settings.evaluationEpisodes);
  return { summary, evaluation };
}

/**
 * The learning summary and measured episodes of a run split across children: the training part,
 * the measured parts in episode order and the decision. The same figures as `learnWithSampler`:
 * keys and learning states first met while measuring are counted once, in the order a single
 * process would have met them, and fill the kept states after the training table's (they have no visits).
 */
export function joinLearning(
  settings: LearningSettings,
  trained: TrainedPart,
  parts: readonly MeasuredPart[],
  decision: Pick<LearningSummary, 'decision' | 'noDecision'>,
): { summary: LearningSummary; evaluation: EpisodeRecords } {
  const newKeys = new Set<string>();
  const newStates = new Map<string, LearnedState>();
  let unlearnedSteps = 0;
  for (const part of parts) {
    for (const key of part.newKeys) newKeys.add(key);
    for (const state of part.newStates) {
      const id = `${state.step ?? 0}\n${state.key}`;
      if (!newStates.has(id)) newStates.set(id, state);
    }
    unlearnedSteps += part.unlearnedSteps;
  }
  const states = [...trained.kept];
  for (const state of newStates.values()) {
    if (states.length >= KEPT_STATES) break;
    states.push(state);
  }
  const summary: LearningSummary = {
    ...summaryHead(settings, trained.spent),
    distinctKeys: trained.table.keys.length + newKeys.size,
    learningStates: trained.table.stateKey.length + newStates.size,
    unlearnedSteps,
    path: parts[0]?.path ?? { keys: [], actions: [], truncated: false },
    states,
  };
  if (trained.watched) summary.sourceStates = trained.watched;
  if (decision.noDecision !== undefined) summary.noDecision = decision.noDecision;
  if (decision.decision !== undefined) summary.decision = decision.decision;
  return { summary, evaluation: joinRecords(parts.map((part) => part.records)) };
}

/** Episode records of consecutive ranges, in order. */
export function joinRecords(parts: readonly EpisodeRecords[]): EpisodeRecords {
  let total = 0;
  for (const part of parts) total += part.returns.length;
  const joined = { returns: new Float64Array(total), lengths: new Int32Array(total), ends: new Uint8Array(total) };
  let at = 0;
  for (const part of parts) {
    joined.returns.set(part.returns, at);
    joined.lengths.set(part.lengths, at);
    joined.ends.set(part.ends, at);
    at += part.returns.length;
  }
  return joined;
}

/** Episodes under `choose`, seeded per episode; `firstAction` forces the action at the first step. */
function rolloutGreedy(
  sampler: LearningSampler,
  episodes: number,
  seed: number,
  firstEpisode: number,
  limit: number,
  horizon: number | undefined,
  discount: number,
  choose: (state: number, t: number) => number,
  policy: Xoshiro128,
  firstAction: number | undefined,
  path?: LearningSummary['path'],
): EpisodeRecords {
  const returns = new Float64Array(episodes);
  const lengths = new Int32Array(episodes);
  const ends = new Uint8Array(episodes);
  for (let e = 0; e < episodes; e++) {
    const episode = firstEpisode + e;
    sampler.seedEpisode(seed, episode, 0);
    policy.seedEpisode(seed, episode, 1);
    sampler.start();
    let end = sampler.end;
    let state = sampler.state;
    let t = 0;
    let total = 0;
    let weight = 1;
    const tracing = path !== undefined && e === 0;
    if (tracing) path.keys.push(sampler.keyOf(state));
    while (end === END_NONE) {
      if (t >= limit) {
        end = horizon === undefined ? END_STEP_CAP : END_NONE;
        break;
      }
      const a = t === 0 && firstAction !== undefined ? firstAction : choose(state, t);
      if (tracing && t < PATH_STEPS) path.actions.push(sampler.actionNameOf(state, a));
      sampler.step(state, a);
      total += weight * sampler.reward;
      weight *= discount;
      state = sampler.state;
      end = sampler.end;
      t++;
      if (tracing && t <= PATH_STEPS) path.keys.push(sampler.keyOf(state));
    }
    if (tracing) path.truncated = t > PATH_STEPS;
    returns[e] = total;
    lengths[e] = t;
    ends[e] = end;
  }
  return { returns, lengths, ends };
}

/** The start state(s) first, then the most visited states, with each action's Q and visit count. */
function keptStates(sampler: LearningSampler, table: Table, timed: boolean): LearnedState[] {
  const order = Array.from({ length: table.size }, (_, i) => i).sort(
    (x, y) => table.stateVisits[y] - table.stateVisits[x] || x - y,
  );
  return order.slice(0, KEPT_STATES).map((id) => keptState(sampler, table, id, timed));
}

function keptState(sampler: LearningSampler, table: Table, id: number, timed: boolean): LearnedState {
  const first = table.slotStart[id];
  const actions: LearnedAction[] = [];
  for (let a = 0; a < table.slotCount[id]; a++) {
    const visits = table.visits[first + a];
    actions.push({
      action: sampler.actionNameOf(table.sampleState[id], a),
      q: visits > 0 ? table.q[first + a] : NaN,
      visits,
    });
  }
  return {
    key: sampler.keyOf(table.sampleState[id]),
    step: timed ? table.stepOf[id] : undefined,
    visits: table.stateVisits[id],
    actions,
  };
}

function decideStart(
  sampler: LearningSampler,
  table: Table,
  options: LearnOptions,
  limit: number,
  measuredEpisodes: number,
  startId: number,
  choose: (state: number, t: number) => number,
  policy: Xoshiro128,
  summary: Pick<LearningSummary, 'decision' | 'noDecision'>,
): void {
  const episodes = options.settings.decisionEpisodes;
  if (episodes < 2) {
    summary.noDecision = 'no decision episodes were asked for';
    return;
  }
  const first = table.slotStart[startId];
  const tried: number[] = [];
  for (let a = 0; a < table.slotCount[startId]; a++) if (table.visits[first + a] > 0) tried.push(a);
  if (tried.length < 2) {
    summary.noDecision =
      table.slotCount[startId] < 2 ? 'the start state has one action' : 'fewer than two start actions were tried';
    return;
  }
  const sign = options.maximize ? 1 : -1;
  tried.sort((x, y) => sign * table.q[first + y] - sign * table.q[first + x] || x - y);
  const [a, b] = tried;
  const start = table.sampleState[startId];
  // Fresh episodes past the measured ones, so the decision uses draws of its own.
  const base = measuredEpisodes;
  const arm = (action: number, offset: number) => {
    const records = rolloutGreedy(
      sampler,
      episodes,
      options.seed,
      base + offset,
      limit,
      options.horizon,
      options.discount,
      choose,
      policy,
      action,
    );
    let mean = 0;
    for (const r of records.returns) mean += r;
    mean /= episodes;
    let squares = 0;
    for (const r of records.returns) squares += (r - mean) ** 2;
    return {
      action: sampler.actionNameOf(start, action),
      mean,
      standardDeviation: Math.sqrt(squares / (episodes - 1)),
    };
  };
  const best = arm(a, 0);
  const runnerUp = arm(b, episodes);
  const difference = sign * (best.mean - runnerUp.mean);
  const standardError = Math.sqrt((best.standardDeviation ** 2 + runnerUp.standardDeviation ** 2) / episodes);
  const z = standardError > 0 ? difference / standardError : difference > 0 ? Infinity : difference < 0 ? -Infinity : 0;
  const decided = z >= 1.96;
  // n = 1.96^2 (sd1^2 + sd2^2) / d^2 per action (see StartDecision).
  const needed =
    Math.abs(difference) > 0
      ? Math.ceil((1.96 * 1.96 * (best.standardDeviation ** 2 + runnerUp.standardDeviation ** 2)) / difference ** 2)
      : Infinity;
  summary.decision = {
    key: sampler.keyOf(start),
    best,
    runnerUp,
    episodes,
    z,
    decided,
    moreEpisodes: decided ? 0 : Math.max(0, needed - episodes),
  };
}

/** A sampler over a compiled model (enumerable specs with rollouts asked for; tests). */
export class CompiledSampler implements LearningSampler {
  state = 0;
  reward = 0;
  end = END_NONE;
  private readonly world = new Xoshiro128();
  private readonly seen: Uint8Array;
  private distinct = 0;

  constructor(private readonly model: CompiledModel) {
    this.seen = new Uint8Array(model.stateCount);
  }

  get stateCount(): number {
    return this.distinct;
  }

  seedEpisode(seed: number, episode: number, stream: number): void {
    this.world.seedEpisode(seed, episode, stream);
  }

  start(): void {
    const m = this.model;
    this.state = m.startState[pick(m.startProb, 0, m.startProb.length, this.world.nextFloat())];
    this.arrive();
  }

  actionCount(state: number): number {
    return this.model.choiceStart[state + 1] - this.model.choiceStart[state];
  }

  step(state: number, action: number): void {
    const m = this.model;
    const choice = m.choiceStart[state] + action;
    const k = pick(m.outcomeProb, m.outcomeStart[choice], m.outcomeStart[choice + 1], this.world.nextFloat());
    this.reward = m.outcomeReward[k];
    this.state = m.outcomeTarget[k];
    this.arrive();
  }

  keyOf(state: number): string {
    return this.model.stateIds[state];
  }

  actionNameOf(state: number, action: number): string {
    return this.model.actionNames[this.model.choiceAction[this.model.choiceStart[state] + action]];
  }

  private arrive(): void {
    if (this.seen[this.state] === 0) {
      this.seen[this.state] = 1;
      this.distinct++;
    }
    this.end = this.model.terminal[this.state];
  }
}

function pick(probability: ArrayLike<number>, first: number, end: number, u: number): number {
  let cumulative = 0;
  for (let i = first; i < end - 1; i++) {
    cumulative += probability[i];
    if (u < cumulative) return i;
  }
  return end - 1;
}

/**
 * A sampler over model functions: `start`/`startDistribution`, `actions`, `sample` (or a draw from
 * `outcomes`) and `terminal`. A state's actions are asked once, when it is first acted in (the
 * functions are deterministic in the state, which the determinism checks of the rollouts verify).
 * It keeps where the model is (function, state, action, episode, step) for messages.
 */
export class FunctionSampler implements LearningSampler {
  state = 0;
  reward = 0;
  end = END_NONE;
  phase: ModelFunction = 'start';
  current: unknown;
  currentAction: unknown;
  episode = 0;
  /** The state the episode is in: with a spec's `stateKey` one key stands for many states, so stepping from the key's first state would freeze a continuous walk. */
  private live: unknown;
  steps = 0;
  private readonly generator = new Xoshiro128();
  private readonly rng = createModelRng(this.generator);
  private readonly index = new Map<string, number>();
  private readonly keys: string[] = [];
  private readonly values: unknown[] = [];
  private readonly actionLists: Array<unknown[] | undefined> = [];
  private readonly actionNames: string[][] = [];
  private readonly strictTerms: boolean;
  private readonly termIndex?: Map<string, number>;
  private readonly scratch: number[] = [];

  constructor(
    private readonly model: ModelFunctions,
    declaredTerms: string[],
    private readonly progress?: Progress,
  ) {
    this.strictTerms = declaredTerms.length > 0;
    this.termIndex = this.strictTerms ? new Map(declaredTerms.map((t, i) => [t, i])) : undefined;
  }

  get stateCount(): number {
    return this.keys.length;
  }

  seedEpisode(seed: number, episode: number, stream: number): void {
    this.generator.seedEpisode(seed, episode, stream);
    this.episode = episode;
    if (this.progress) this.progress[2] = episode;
  }

  start(): void {
    const model = this.model;
    this.steps = 0;
    this.enter('start', 1);
    let value: unknown;
    if (typeof model.start === 'function') value = (model.start as (rng: unknown) => unknown)(this.rng);
    else if (model.startDistribution !== undefined)
      value = drawStart(listOf(model.startDistribution, 'startDistribution'), this.generator);
    else value = structuredClone(model.start);
    this.current = value;
    this.live = value;
    this.currentAction = undefined;
    this.state = this.idOf(value);
    this.end = this.terminalOf(value, undefined);
  }

  actionCount(state: number): number {
    let list = this.actionLists[state];
    if (list === undefined) {
      const value = this.values[state];
      this.current = value;
      this.enter('actions', 2);
      list = listOf(this.model.actions!(value), 'the returned action list');
      this.actionNames[state] = list.map((a, i) => actionName(a, `action ${i}`));
      this.actionLists[state] = list;
    }
    if (list.length === 0) throw new DeadEnd(this.keys[state]);
    return list.length;
  }

  step(state: number, action: number): void {
    const value = state === this.state ? this.live : this.values[state];
    const chosen = this.actionLists[state]![action];
    this.current = value;
    this.currentAction = chosen;
    if (this.progress) this.progress[3] = this.steps;
    let next: unknown;
    let reward: unknown;
    let said: unknown;
    if (this.model.sample) {
      this.enter('sample', 5);
      const result = this.model.sample(value, chosen, this.rng) as {
        state?: unknown;
        reward?: unknown;
        terminal?: unknown;
      };
      if (typeof result !== 'object' || result === null || !('state' in result)) {
        if (result && typeof (result as { then?: unknown }).then === 'function') {
          throw new MalformedValue('the result is a Promise; model functions must return their value synchronously');
        }
        throw new MalformedValue(`the result is ${describeValue(result)}; expected { state, reward, terminal? }`);
      }
      next = result.state;
      reward = result.reward;
      said = result.terminal;
    } else {
      this.enter('outcomes', 3);
      const drawn = drawOutcome(
        listOf(this.model.outcomes!(value, chosen), 'the returned outcome list'),
        this.generator.nextFloat(),
      );
      next = drawn.state;
      reward = drawn.reward;
    }
    const r =
      typeof reward === 'number'
        ? reward
        : readReward(reward, this.termIndex, this.scratch, this.strictTerms, 'the reward');
    if (!Number.isFinite(r)) throw new MalformedValue(`the reward is ${r}; learning needs finite rewards`);
    this.steps++;
    this.reward = r;
    this.current = next;
    this.live = next;
    this.currentAction = undefined;
    this.state = this.idOf(next);
    this.end = this.terminalOf(next, said);
  }

  keyOf(state: number): string {
    return this.keys[state];
  }

  actionNameOf(state: number, action: number): string {
    return this.actionNames[state][action];
  }

  private enter(phase: ModelFunction, code: number): void {
    this.phase = phase;
    if (this.progress) {
      this.progress[1] = code;
      this.progress[0]++;
    }
  }

  private terminalOf(value: unknown, said: unknown): number {
    let code = terminalCode(said, 'the returned terminal kind');
    if (code === 0 && this.model.terminal) {
      this.enter('terminal', 4);
      code = terminalCode(this.model.terminal(value), 'the returned terminal kind');
    }
    return code;
  }

  private idOf(value: unknown): number {
    this.enter('stateKey', 6);
    const key = keyOfState(this.model, value);
    const known = this.index.get(key);
    if (known !== undefined) return known;
    const id = this.keys.length;
    this.keys.push(key);
    this.values.push(value);
    this.index.set(key, id);
    this.actionLists.push(undefined);
    this.actionNames.push([]);
    return id;
  }
}

/** A state that is not terminal but has no action: reported as a dead end, like the rollouts do. */
class DeadEnd extends Error {
  constructor(readonly key: string) {
    super('actions() returned no action for a state that is not terminal');
  }
}

/** Options of the sandbox job: learning over the model functions. */
export interface LearnJobOptions extends LearnOptions {
  declaredTerms: string[];
}

/**
 * Learning over model functions (the sandbox worker's `learn` job). A problem in model code stops
 * the run and is returned with where it happened; this never throws for model code.
 */
export function learnModel(model: ModelFunctions, options: LearnJobOptions, progress?: Progress): LearnRun {
  const sampler = new FunctionSampler(model, options.declaredTerms, progress);
  try {
    return learnWithSampler(sampler, options);
  } catch (error) {
    return {
      summary: emptySummary(options),
      evaluation: { returns: new Float64Array(0), lengths: new Int32Array(0), ends: new Uint8Array(0) },
      problem: samplerProblem(error, sampler),
    };
  }
}

/** Where a sampler over model code was when model code failed, as a RuntimeProblem. */
function samplerProblem(error: unknown, sampler: FunctionSampler): RuntimeProblem {
  const where = { episode: sampler.episode, step: sampler.steps };
  return error instanceof DeadEnd
    ? { kind: 'dead-end', phase: 'actions', message: error.message, state: error.key, ...where }
    : problemOf(error, sampler.phase, {
        state: sampler.current === undefined ? undefined : describeValue(sampler.current),
        action: sampler.currentAction === undefined ? undefined : String(sampler.currentAction),
        ...where,
      });
}

/** A learner trained in this process, kept for the decision (the worker's `decide` job). */
export interface TrainedSession {
  learner: Learner;
  sampler: FunctionSampler;
}

/** The training phase over model functions (the `train` job). */
export function trainModel(
  model: ModelFunctions,
  options: LearnJobOptions,
  progress?: Progress,
): { trained?: TrainedPart; problem?: RuntimeProblem; session?: TrainedSession } {
  const sampler = new FunctionSampler(model, options.declaredTerms, progress);
  try {
    const learner = new Learner(sampler, options);
    learner.train();
    const trained: TrainedPart = {
      table: learner.exportTable(),
      spent: { episodes: learner.episodes, steps: learner.steps },
      kept: learner.keptStates(),
      watched: learner.watchedStates(),
    };
    return { trained, session: { learner, sampler } };
  } catch (error) {
    return { problem: samplerProblem(error, sampler) };
  }
}

/** Options of the `measure` job: a range of measured episodes under a learned table. */
export interface MeasureJobOptions extends LearnJobOptions {
  table: LearnedTable;
  first: number;
  count: number;
}

/** The greedy policy of a learned table on a range of measured episodes (the `measure` job). */
export function measureModel(
  model: ModelFunctions,
  options: MeasureJobOptions,
  progress?: Progress,
): { part?: MeasuredPart; problem?: RuntimeProblem } {
  const sampler = new FunctionSampler(model, options.declaredTerms, progress);
  try {
    const learner = new Learner(sampler, options, options.table);
    const path: LearningSummary['path'] | undefined =
      options.first === 0 ? { keys: [], actions: [], truncated: false } : undefined;
    const records = learner.measure(options.first, options.count, path);
    return { part: learner.measuredBeyond(records, path) };
  } catch (error) {
    return { problem: samplerProblem(error, sampler) };
  }
}

/** The decision on the start actions of a trained session (the `decide` job). */
export function decideModel(
  session: TrainedSession,
  measuredEpisodes: number,
): { decision: Pick<LearningSummary, 'decision' | 'noDecision'>; problem?: RuntimeProblem } {
  const decision: Pick<LearningSummary, 'decision' | 'noDecision'> = {};
  try {
    session.learner.decide(decision, measuredEpisodes);
    return { decision };
  } catch (error) {
    return { decision: {}, problem: samplerProblem(error, session.sampler) };
  }
}

function emptySummary(options: LearnOptions): LearningSummary {
  const s = options.settings;
  return {
    method: s.method,
    epsilon: s.epsilon,
    budget: { episodes: s.episodes, steps: s.steps },
    spent: { episodes: 0, steps: 0 },
    distinctKeys: 0,
    learningStates: 0,
    unlearnedSteps: 0,
    path: { keys: [], actions: [], truncated: false },
    states: [],
  };
}

/**
 * Learning on an enumerable model with rollouts asked for (`--rollouts N`): the model is sampled
 * as a black box through its compiled outcomes, and the learned policy's estimate is set beside
 * the exact optimal value of the start (the gap is learned mean minus the middle of the exact bounds).
 */
export function exactModelLearning(
  model: CompiledModel,
  optimal: { lower: number; upper: number },
  settings: LearningSettings,
  options: { seed: number; stepCap: number },
): { learned: RolloutStats; learning: LearningSummary } {
  const run = learnWithSampler(new CompiledSampler(model), {
    settings,
    seed: options.seed,
    discount: model.discount,
    horizon: model.horizon,
    stepCap: options.stepCap,
    maximize: model.maximize,
  });
  const learned = summarizeEpisodes(run.evaluation, {
    policy: 'learned',
    seed: options.seed,
    stepCap: effectiveStepCap(model.discount, options.stepCap),
  });
  const exact = (optimal.lower + optimal.upper) / 2;
  const { lower, upper } = learned.return.ci95;
  run.summary.exact = {
    optimal: { lower: optimal.lower, upper: optimal.upper },
    gap: Number.isFinite(exact) ? learned.return.mean - exact : NaN,
    withinInterval: lower <= optimal.upper && optimal.lower <= upper,
  };
  return { learned, learning: run.summary };
}
