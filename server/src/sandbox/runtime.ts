/**
 * Drives a TypeScript model's functions: canonical state keys, breadth-first enumeration, sampled
 * rollouts and the checks of what the functions return. It runs inside the sandbox worker, and the
 * benchmark calls the same functions directly to measure what the sandbox costs. It must not import
 * anything that needs the host (file system, esbuild, ts-morph).
 */
import { withRoom, type NumberColumn } from '../model/compiled';
import type { TransitionCounts } from '../model/empirical';
import type { RecordOptions, TrajectoryLog } from './transition-record';
import {
  effectiveStepCap,
  END_FAILURE,
  END_GOAL,
  END_NEUTRAL,
  END_NONE,
  END_STEP_CAP,
  Xoshiro128,
  type EpisodeRecords,
} from '../analysis/rollouts';

/** What a model function did wrong; `phase` names the function. */
export interface RuntimeProblem {
  kind: 'threw' | 'malformed' | 'exit' | 'dead-end' | 'probability-sum' | 'non-finite-reward' | 'timeout' | 'memory';
  phase: ModelFunction;
  message: string;
  /** The stack of a thrown error (generated positions; the host maps them to the source). */
  stack?: string;
  /** The state (canonical JSON where it has one) the function was called with. */
  state?: string;
  action?: string;
  episode?: number;
  step?: number;
}

export type ModelFunction = 'load' | 'start' | 'actions' | 'outcomes' | 'terminal' | 'sample' | 'stateKey';
export const PHASE_CODES: readonly ModelFunction[] = [
  'load',
  'start',
  'actions',
  'outcomes',
  'terminal',
  'sample',
  'stateKey',
];

/**
 * Progress shared with the host (a SharedArrayBuffer in the worker): [0] calls made, [1] phase
 * code of the running function, [2] state index or episode, [3] step. The host watches [0] to tell
 * a hung call from a slow run, and reads the rest to say where it hung.
 */
export type Progress = Int32Array;

/** Thrown by `process.exit` inside the worker, so the call is reported with its stack. */
export class ModelExitCall extends Error {
  /** `call` is what the model called, e.g. "process.exit(1)". */
  constructor(call: string) {
    super(`called ${call}`);
  }
}

/** A value of model code that is not what the contract asks for (learn.ts reports it as such too). */
export class MalformedValue extends Error {}

/**
 * Thrown inside the sandbox by the loop checks and call counters when a limit runs out; `kind`
 * says which, and the message is the finding's text. Model code can catch it, which is why the
 * host keeps its own, harder limits.
 */
export class SandboxLimitReached extends Error {
  constructor(
    readonly kind: 'timeout' | 'memory',
    message: string,
  ) {
    super(message);
  }
}

/**
 * "Name: message" of a thrown value without trusting it: an error's `name` and `message` may be
 * getters that throw or return anything, and reading them must never throw again.
 */
export function thrownText(error: unknown): string {
  const read = (key: 'name' | 'message'): string | undefined => {
    try {
      const value = (error as Record<string, unknown>)[key];
      return typeof value === 'string' ? value : value === undefined ? undefined : describeValue(value);
    } catch {
      return undefined;
    }
  };
  if (error instanceof Error) {
    const name = read('name') ?? 'Error';
    const message = read('message');
    return message === undefined ? `${name} (its message could not be read)` : `${name}: ${message}`;
  }
  try {
    return describeValue(error);
  } catch {
    return 'a value that cannot be shown';
  }
}

/** The stack of a thrown error, or undefined when reading it fails. */
export function thrownStack(error: unknown): string | undefined {
  try {
    const stack = (error as { stack?: unknown } | null)?.stack;
    return typeof stack === 'string' ? stack : undefined;
  } catch {
    return undefined;
  }
}

const OBJECT_PROTOTYPE = Object.prototype;

/**
 * The canonical key of a plain JSON value: JSON with object keys sorted, so equal states get equal
 * keys whatever the property order. Throws MalformedValue for anything that is not plain data.
 * Values that are already canonical (sorted keys, plain data) go straight to the native
 * JSON.stringify, whose flat result string is also the cheapest to hash in the state index.
 */
export function canonicalKey(value: unknown, path = 'state'): string {
  if (typeof value === 'number') {
    if (!Number.isFinite(value)) throw new MalformedValue(`${path} is ${value}, not a finite number`);
    return JSON.stringify(value);
  }
  return JSON.stringify(isCanonical(value, 0) ? value : canonicalCopy(value, path, 0));
}

/** True for plain JSON data whose object keys are all in sorted order. */
function isCanonical(value: unknown, depth: number): boolean {
  switch (typeof value) {
    case 'number':
      return Number.isFinite(value);
    case 'string':
    case 'boolean':
      return true;
    case 'object': {
      if (value === null) return true;
      if (depth > 64) return false;
      if (Array.isArray(value)) {
        for (let i = 0; i < value.length; i++) if (!isCanonical(value[i], depth + 1)) return false;
        return true;
      }
      const proto = Object.getPrototypeOf(value);
      if (proto !== OBJECT_PROTOTYPE && proto !== null) return false;
      let previous: string | undefined;
      for (const key in value) {
        if (previous !== undefined && previous >= key) return false;
        if (!isCanonical((value as Record<string, unknown>)[key], depth + 1)) return false;
        previous = key;
      }
      return true;
    }
    default:
      return false;
  }
}

/** A copy with sorted keys, or MalformedValue naming the first part that is not plain data. */
function canonicalCopy(value: unknown, path: string, depth: number): unknown {
  switch (typeof value) {
    case 'number':
      if (!Number.isFinite(value)) throw new MalformedValue(`${path} is ${value}, not a finite number`);
      return value;
    case 'string':
    case 'boolean':
      return value;
    case 'object': {
      if (value === null) return null;
      if (depth > 64) throw new MalformedValue(`${path} is nested more than 64 levels deep (a cycle?)`);
      if (Array.isArray(value)) {
        const items = new Array<unknown>(value.length);
        for (let i = 0; i < value.length; i++) items[i] = canonicalCopy(value[i], `${path}[${i}]`, depth + 1);
        return items;
      }
      const proto = Object.getPrototypeOf(value);
      if (proto !== OBJECT_PROTOTYPE && proto !== null) {
        const kind = (value as object).constructor?.name ?? 'object';
        throw new MalformedValue(
          `${path} is a ${kind}; states must be plain JSON values (objects, arrays, numbers, strings)`,
        );
      }
      const copy: Record<string, unknown> = {};
      for (const key of Object.keys(value).sort()) {
        const item = (value as Record<string, unknown>)[key];
        // JSON leaves out undefined properties; so does the key.
        if (item === undefined) continue;
        const plain = canonicalCopy(item, `${path}.${key}`, depth + 1);
        if (key === '__proto__')
          Object.defineProperty(copy, key, { value: plain, enumerable: true, writable: true, configurable: true });
        else copy[key] = plain;
      }
      return copy;
    }
    default:
      throw new MalformedValue(
        `${path} is ${value === undefined ? 'undefined' : `a ${typeof value}`}; states must be plain JSON values`,
      );
  }
}

/** Freezes a plain value in depth, so that model code that changes a stored state fails loudly. */
function deepFreeze(value: unknown): void {
  if (typeof value !== 'object' || value === null || Object.isFrozen(value)) return;
  Object.freeze(value);
  for (const key of Object.keys(value)) deepFreeze((value as Record<string, unknown>)[key]);
}

/** A readable rendering of any state for messages, cut at 200 characters. */
export function describeValue(value: unknown): string {
  let text: string;
  try {
    text = canonicalKey(value);
  } catch {
    try {
      text = JSON.stringify(value) ?? String(value);
    } catch {
      try {
        text = String(value);
      } catch {
        // A toString that throws, or an object without one.
        text = `a ${typeof value} that cannot be shown`;
      }
    }
  }
  return text.length > 200 ? `${text.slice(0, 199)}…` : text;
}

/** The `rng` handed to model code: a callable float source with helpers, backed by xoshiro128**. */
export interface ModelRng {
  (): number;
  int(n: number): number;
  pick<T>(items: readonly T[]): T;
  chance(p: number): boolean;
  normal(mean?: number, standardDeviation?: number): number;
  readonly generator: Xoshiro128;
}

export function createModelRng(generator: Xoshiro128): ModelRng {
  const rng = (() => generator.nextFloat()) as ModelRng;
  rng.int = (n) => generator.nextInt(n);
  rng.pick = (items) => items[generator.nextInt(items.length)];
  rng.chance = (p) => generator.nextFloat() < p;
  // Box-Muller transform (Box and Muller, Annals of Mathematical Statistics 29(2), 1958).
  rng.normal = (mean = 0, standardDeviation = 1) => {
    const u = 1 - generator.nextFloat();
    const v = generator.nextFloat();
    return mean + standardDeviation * Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
  };
  (rng as { generator: Xoshiro128 }).generator = generator;
  return rng;
}

/** The model functions, as found on the default export. */
export interface ModelFunctions {
  start?: unknown;
  startDistribution?: unknown;
  actions?: (state: unknown) => unknown;
  outcomes?: (state: unknown, action: unknown) => unknown;
  terminal?: (state: unknown) => unknown;
  sample?: (state: unknown, action: unknown, rng: ModelRng) => unknown;
  /** Maps a (continuous) state to the discrete key the empirical model and learning group it under. */
  stateKey?: (state: unknown) => unknown;
}

/**
 * The key under which the empirical model and learning group a state: the spec's own
 * `stateKey(state)` (a string or a finite number) when it has one, else the canonical key. Every
 * user of sampled states goes through this one helper, so they agree on what "the same state" is.
 * Throws what `stateKey` throws, or MalformedValue for a key that is neither a string nor a number.
 */
export function keyOfState(model: ModelFunctions, state: unknown): string {
  const own = model.stateKey;
  if (typeof own !== 'function') return canonicalKey(state);
  const key = own(state);
  if (typeof key === 'string' || (typeof key === 'number' && Number.isFinite(key))) return JSON.stringify(key);
  const shown = typeof key === 'number' ? String(key) : describeValue(key);
  throw new MalformedValue(`stateKey(state) returned ${shown}; expected a string or a finite number`);
}

export const TERMINAL_CODES: Record<string, number> = { goal: END_GOAL, failure: END_FAILURE, neutral: END_NEUTRAL };

export function terminalCode(value: unknown, what: string): number {
  if (value === undefined || value === null || value === false) return 0;
  const code = typeof value === 'string' ? TERMINAL_CODES[value] : undefined;
  if (code === undefined)
    throw new MalformedValue(`${what} is ${describeValue(value)}; expected "goal", "failure", "neutral" or undefined`);
  return code;
}

/** Adds a reward (number or term map) into `terms` and returns its scalar total. */
export function readReward(
  reward: unknown,
  termIndex: Map<string, number> | undefined,
  termValues: number[] | undefined,
  strictTerms: boolean,
  what: string,
): number {
  if (typeof reward === 'number') return reward;
  if (typeof reward !== 'object' || reward === null || Array.isArray(reward)) {
    throw new MalformedValue(`${what} is ${describeValue(reward)}; expected a number or an object of reward terms`);
  }
  let total = 0;
  for (const term of Object.keys(reward)) {
    const value = (reward as Record<string, unknown>)[term];
    if (typeof value !== 'number')
      throw new MalformedValue(`${what}.${term} is ${describeValue(value)}; expected a number`);
    total += value;
    if (termIndex && termValues) {
      let index = termIndex.get(term);
      if (index === undefined) {
        if (strictTerms)
          throw new MalformedValue(`${what} names the reward term "${term}", which rewardTerms does not declare`);
        index = termIndex.size;
        termIndex.set(term, index);
      }
      termValues[index] = (termValues[index] ?? 0) + value;
    }
  }
  return total;
}

export function actionName(action: unknown, what: string): string {
  if (typeof action === 'string') return action;
  if (typeof action === 'number' && Number.isFinite(action)) return String(action);
  throw new MalformedValue(`${what} is ${describeValue(action)}; actions must be strings or numbers`);
}

export function listOf(value: unknown, what: string): unknown[] {
  if (Array.isArray(value)) return value;
  if (value && typeof (value as { then?: unknown }).then === 'function') {
    throw new MalformedValue(`${what} is a Promise; model functions must return their value synchronously`);
  }
  throw new MalformedValue(`${what} is ${describeValue(value)}; expected an array`);
}

export function problemOf(error: unknown, phase: ModelFunction, context: Partial<RuntimeProblem>): RuntimeProblem {
  return { ...thrownProblem(error, phase), ...context };
}

/** The problem a thrown value stands for; reading the value never throws (see thrownText). */
export function thrownProblem(error: unknown, phase: ModelFunction): RuntimeProblem {
  if (error instanceof MalformedValue) return { kind: 'malformed', phase, message: error.message };
  if (error instanceof ModelExitCall) return { kind: 'exit', phase, message: error.message, stack: error.stack };
  if (error instanceof SandboxLimitReached)
    return { kind: error.kind, phase, message: error.message, stack: error.stack };
  // The rule puts "threw" before the message, so a thrown number reads "threw 42".
  return { kind: 'threw', phase, message: thrownText(error), stack: thrownStack(error) };
}

/** Result of a breadth-first enumeration, in the worker's compact form (CSR arrays). */
export interface Enumeration {
  stateKeys: string[];
  terminal: Uint8Array;
  actionNames: string[];
  choiceStart: Int32Array;
  choiceAction: Int32Array;
  outcomeStart: Int32Array;
  outcomeTarget: Int32Array;
  outcomeProb: Float64Array;
  outcomeReward: Float64Array;
  termNames: string[];
  /** Per term, its part of each outcome's reward. */
  termRewards: Float64Array[];
  startStates: Int32Array;
  startProbs: Float64Array;
  /** True when the state cap stopped the enumeration; `stateKeys` then lists the states found so far. */
  capped: boolean;
  /** The first state that did not fit under the cap. */
  firstBeyondCap?: string;
  problem?: RuntimeProblem;
  /** Choices whose repeated call gave a different answer. */
  nondeterminism: Array<{ phase: ModelFunction; state: string; action?: string; first: string; second: string }>;
  outcomesListed: number;
}

/** The outcome columns of an enumeration; the rest (keys, choices, start, problems) is its head. */
export type OutcomeColumnName = 'outcomeTarget' | 'outcomeProb' | 'outcomeReward' | 'termRewards';
export type EnumerationHead = Omit<Enumeration, OutcomeColumnName>;

/** An enumeration whose outcome columns are still in chunks of OUTCOME_CHUNK entries (the last may be shorter). */
export interface ChunkedEnumeration {
  head: EnumerationHead;
  target: Int32Array[];
  prob: Float64Array[];
  reward: Float64Array[];
  /** Per term, its chunks. */
  terms: Float64Array[][];
}

export interface EnumerationOptions {
  stateCap: number;
  /** Declared reward terms; other term names are malformed when any are declared. */
  declaredTerms: string[];
  /** How many choices to call twice to check that the model is deterministic. */
  recheckChoices: number;
  progress: Progress;
  /** Receives the key of each state as it is expanded (the host shows it when a call hangs). */
  onExpand?: (key: string) => void;
}

/**
 * A typed column that grows by doubling. `take` returns an exact-size copy: the result crosses the
 * IPC channel by structured clone, which would carry a view's whole buffer, slack included.
 */
class GrowableColumn<T extends NumberColumn> {
  private data: T;
  length = 0;

  constructor(kind: new (length: number) => T) {
    this.data = new kind(64);
  }

  push(value: number): void {
    if (this.length >= this.data.length) this.data = withRoom(this.data, this.length + 1);
    this.data[this.length++] = value;
  }

  at(i: number): number {
    return this.data[i];
  }

  /** Appends `count` zeros (a fresh buffer is zero-filled). */
  fillZeros(count: number): void {
    this.data = withRoom(this.data, this.length + count);
    this.data.fill(0, this.length, this.length + count);
    this.length += count;
  }

  take(): T {
    const out = this.data.slice(0, this.length) as T;
    this.data = out.subarray(0, 0) as T;
    this.length = 0;
    return out;
  }
}

/** Integer states below this are looked up in a flat table (it grows only as far as 8 entries per state found). */
const SMALL_STATE_LIMIT = 1 << 26;

/** Entries in each full chunk of an outcome column: 2^18, so a chunk of all outcome columns is about 5 MB. */
export const OUTCOME_CHUNK_BITS = 18;
export const OUTCOME_CHUNK = 1 << OUTCOME_CHUNK_BITS;

/**
 * A typed column kept in chunks of OUTCOME_CHUNK entries. Growing never copies what is stored
 * (the first chunk doubles up to full size, later ones are allocated full), and the sandbox sends
 * the chunks one reply part at a time, so no second whole copy of a column exists in either process.
 */
class ChunkedColumn<T extends Int32Array | Float64Array> {
  private readonly chunks: T[];
  private last: T;
  private fill = 0;

  constructor(private readonly kind: new (length: number) => T) {
    this.last = new kind(64);
    this.chunks = [this.last];
  }

  push(value: number): void {
    if (this.fill === this.last.length) this.makeRoom();
    this.last[this.fill++] = value;
  }

  get length(): number {
    return (this.chunks.length - 1) * OUTCOME_CHUNK + this.fill;
  }

  /** Entry i; every chunk but the last is full, so the chunk number is i's high bits. */
  at(i: number): number {
    return this.chunks[i >>> OUTCOME_CHUNK_BITS][i & (OUTCOME_CHUNK - 1)];
  }

  /** Appends `count` zeros. */
  fillZeros(count: number): void {
    for (let i = 0; i < count; i++) this.push(0);
  }

  /** The chunks, the last cut to its filled part (a copy of at most one chunk: a view would carry its whole buffer across the channel). */
  take(): T[] {
    if (this.fill < this.last.length) this.chunks[this.chunks.length - 1] = this.last.slice(0, this.fill) as T;
    const chunks = this.chunks.slice();
    this.chunks.length = 0;
    this.last = new this.kind(0);
    this.chunks.push(this.last);
    this.fill = 0;
    return chunks;
  }

  private makeRoom(): void {
    if (this.last.length < OUTCOME_CHUNK) {
      this.last = withRoom(this.last, Math.min(OUTCOME_CHUNK, this.last.length * 2));
      this.chunks[this.chunks.length - 1] = this.last;
    } else {
      this.last = new this.kind(OUTCOME_CHUNK);
      this.chunks.push(this.last);
      this.fill = 0;
    }
  }
}

/** One contiguous column from its chunks (for callers in the same process: tests and the benchmark). */
export function joinChunks<T extends Int32Array | Float64Array>(
  chunks: readonly T[],
  kind: new (length: number) => T,
): T {
  let length = 0;
  for (const chunk of chunks) length += chunk.length;
  const out = new kind(length);
  let at = 0;
  for (const chunk of chunks) {
    out.set(chunk, at);
    at += chunk.length;
  }
  return out;
}

/** The enumeration with contiguous outcome columns. */
export function enumerateModel(model: ModelFunctions, options: EnumerationOptions): Enumeration {
  const { head, target, prob, reward, terms } = enumerateInChunks(model, options);
  return {
    ...head,
    outcomeTarget: joinChunks(target, Int32Array),
    outcomeProb: joinChunks(prob, Float64Array),
    outcomeReward: joinChunks(reward, Float64Array),
    termRewards: terms.map((chunks) => joinChunks(chunks, Float64Array)),
  };
}

/**
 * Breadth-first enumeration of every state reachable from the start: each state's key is its
 * canonical JSON, `terminal` is asked first, then `actions`, then `outcomes` for each action.
 * Zero-probability outcomes are dropped. Stops at the first problem or when the cap is reached.
 */
export function enumerateInChunks(model: ModelFunctions, options: EnumerationOptions): ChunkedEnumeration {
  const { progress } = options;
  const keys: string[] = [];
  const values: unknown[] = [];
  const index = new Map<string, number>();
  // Number and string states are looked up by their value: no key string is built for a state already known.
  // Map compares numbers by SameValueZero (0 and -0 alike, as their JSON is); no other value's key is a number's or a string's JSON, so the maps never disagree.
  const numberIndex = new Map<number, number>();
  const stringIndex = new Map<string, number>();
  // Typed columns that double when full: a JS array of numbers costs 8 bytes a slot plus slack and a second copy when converted.
  const terminal = new GrowableColumn(Uint8Array);
  const choiceStart = new GrowableColumn(Int32Array);
  const choiceAction = new GrowableColumn(Int32Array);
  const outcomeStart = new GrowableColumn(Int32Array);
  const target = new ChunkedColumn(Int32Array);
  const prob = new ChunkedColumn(Float64Array);
  const reward = new ChunkedColumn(Float64Array);
  const termIndex = new Map<string, number>();
  for (const term of options.declaredTerms) termIndex.set(term, termIndex.size);
  const strictTerms = options.declaredTerms.length > 0;
  const termColumns: (ChunkedColumn<Float64Array> | undefined)[] = options.declaredTerms.map(
    () => new ChunkedColumn(Float64Array),
  );
  const termScratch: number[] = [];
  const actionIndex = new Map<string, number>();
  const actionNames: string[] = [];
  const startStates: number[] = [];
  const startProbs: number[] = [];
  let capped = false;
  let firstBeyondCap: string | undefined;
  let problem: RuntimeProblem | undefined;
  let phase: ModelFunction = 'start';
  let current = -1;
  let currentAction: string | undefined;

  // Messages are built only on failure: a template string per outcome would cost an allocation each.
  // Small non-negative integer states (the commonest numbered states) are found in a flat table of id + 1:
  // a hash lookup per outcome into a map of a million entries misses the cache almost every time.
  let smallIndex = new Int32Array(1024);
  const growSmallIndex = (value: number): void => {
    smallIndex = withRoom(smallIndex, value + 1);
    // States met while the table was too short are moved in, so that the table alone answers for its range.
    for (const [known, id] of numberIndex) {
      if (known >= 0 && known < smallIndex.length && (known | 0) === known) {
        smallIndex[known] = id + 1;
        numberIndex.delete(known);
      }
    }
  };
  const addState = (value: unknown, what: string | (() => string)): number => {
    if (typeof value === 'number' && value >= 0 && value < SMALL_STATE_LIMIT && (value | 0) === value) {
      if (value >= smallIndex.length && value < Math.max(1 << 16, 8 * keys.length)) growSmallIndex(value);
      if (value < smallIndex.length) {
        const known = smallIndex[value];
        if (known !== 0) return known - 1;
        const id = addKeyed(value, JSON.stringify(value));
        if (id >= 0) smallIndex[value] = id + 1;
        return id;
      }
    }
    if (typeof value === 'number' && Number.isFinite(value)) {
      const known = numberIndex.get(value);
      if (known !== undefined) return known;
      const id = addKeyed(value, JSON.stringify(value));
      if (id >= 0) numberIndex.set(value, id);
      return id;
    }
    if (typeof value === 'string') {
      const known = stringIndex.get(value);
      if (known !== undefined) return known;
      const id = addKeyed(value, JSON.stringify(value));
      if (id >= 0) stringIndex.set(value, id);
      return id;
    }
    let key: string;
    try {
      key = canonicalKey(value);
    } catch (error) {
      if (!(error instanceof MalformedValue)) throw error;
      key = canonicalKey(value, typeof what === 'string' ? what : what());
    }
    const known = index.get(key);
    if (known !== undefined) return known;
    const id = addKeyed(value, key);
    if (id >= 0) index.set(key, id);
    return id;
  };
  /** A state not seen before, or -1 past the cap. */
  const addKeyed = (value: unknown, key: string): number => {
    if (keys.length >= options.stateCap) {
      capped = true;
      firstBeyondCap = key;
      return -1;
    }
    deepFreeze(value);
    const id = keys.length;
    keys.push(key);
    values.push(value);
    return id;
  };

  try {
    if (model.startDistribution !== undefined) {
      const entries = listOf(model.startDistribution, 'startDistribution');
      let sum = 0;
      entries.forEach((entry, i) => {
        const e = entry as { state?: unknown; probability?: unknown };
        if (
          typeof e !== 'object' ||
          e === null ||
          typeof e.probability !== 'number' ||
          !(e.probability >= 0 && e.probability <= 1)
        ) {
          throw new MalformedValue(`startDistribution[${i}] needs a state and a probability between 0 and 1`);
        }
        sum += e.probability;
        if (e.probability > 0) {
          startStates.push(addState(e.state, `startDistribution[${i}].state`));
          startProbs.push(e.probability);
        }
      });
      if (Math.abs(sum - 1) > 1e-9)
        throw new MalformedValue(`the startDistribution probabilities add up to ${sum}, not 1`);
    } else {
      if (model.start === undefined)
        throw new MalformedValue('the model has no start state (give `start` or `startDistribution`)');
      if (typeof model.start === 'function') {
        throw new MalformedValue(
          'an enumerable model needs `start` as a state value (or `startDistribution`), not a function that draws one',
        );
      }
      startStates.push(addState(model.start, 'start'));
      startProbs.push(1);
    }
    if (capped) throw new MalformedValue(`the state cap (${options.stateCap}) is below the number of start states`);

    const { actions, outcomes } = model as Required<Pick<ModelFunctions, 'actions' | 'outcomes'>>;
    const terminalOf = model.terminal;
    for (current = 0; current < keys.length && !capped; current++) {
      const state = values[current];
      progress[2] = current;
      options.onExpand?.(keys[current]);
      currentAction = undefined;
      choiceStart.push(choiceAction.length);
      if (terminalOf) {
        phase = 'terminal';
        progress[1] = 4;
        progress[0]++;
        const code = terminalCode(terminalOf(state), 'the returned terminal kind');
        terminal.push(code);
        if (code !== 0) continue;
      } else terminal.push(0);
      phase = 'actions';
      progress[1] = 2;
      progress[0]++;
      const list = listOf(actions(state), 'the returned action list');
      if (list.length === 0) {
        problem = {
          kind: 'dead-end',
          phase,
          message: 'actions() returned no action for a state that is not terminal',
          state: keys[current],
        };
        break;
      }
      const firstChoice = choiceAction.length;
      phase = 'outcomes';
      progress[1] = 3;
      for (let a = 0; a < list.length; a++) {
        const action = list[a];
        const name = typeof action === 'string' ? action : actionName(action, `action ${a}`);
        currentAction = name;
        let actionId = actionIndex.get(name);
        if (actionId === undefined) {
          actionId = actionNames.length;
          actionNames.push(name);
          actionIndex.set(name, actionId);
        }
        // A linear scan is cheapest for the few actions states usually have.
        for (let b = firstChoice; b < choiceAction.length; b++) {
          if (choiceAction.at(b) === actionId) throw new MalformedValue(`actions() lists "${name}" twice`);
        }
        choiceAction.push(actionId);
        outcomeStart.push(target.length);
        progress[0]++;
        const outs = listOf(outcomes(state, action), 'the returned outcome list');
        if (outs.length === 0)
          throw new MalformedValue('outcomes() returned an empty list; every action needs at least one outcome');
        let sum = 0;
        for (let o = 0; o < outs.length; o++) {
          const out = outs[o] as { state?: unknown; probability?: unknown; reward?: unknown };
          if (typeof out !== 'object' || out === null)
            throw new MalformedValue(`outcome ${o} is ${describeValue(out)}; expected { state, probability, reward }`);
          const p = out.probability;
          if (typeof p !== 'number' || Number.isNaN(p))
            throw new MalformedValue(
              p === undefined
                ? noProbability(out, o)
                : `outcome ${o} has probability ${describeValue(p)}; expected a number`,
            );
          if (p < 0 || p > 1) throw new MalformedValue(`outcome ${o} has probability ${p}, outside [0, 1]`);
          sum += p;
          if (p === 0) continue;
          if (typeof out.reward !== 'number') termScratch.length = 0;
          const r =
            typeof out.reward === 'number'
              ? out.reward
              : readReward(out.reward, termIndex, termScratch, strictTerms, `outcome ${o}'s reward`);
          if (!Number.isFinite(r)) {
            problem = {
              kind: 'non-finite-reward',
              phase,
              message: `the reward ${r} in outcome ${o}`,
              state: keys[current],
              action: name,
            };
            break;
          }
          const next = addState(out.state, () => `outcome ${o}'s state`);
          if (next < 0) break;
          target.push(next);
          prob.push(p);
          reward.push(r);
          for (let t = 0; t < termIndex.size; t++) {
            let column = termColumns[t];
            if (!column) {
              column = new ChunkedColumn(Float64Array);
              column.fillZeros(target.length - 1);
              termColumns[t] = column;
            }
            column.push(termScratch[t] ?? 0);
          }
        }
        if (problem || capped) break;
        if (Math.abs(sum - 1) > 1e-9) {
          problem = {
            kind: 'probability-sum',
            phase,
            message: `the outcome probabilities add up to ${sum}, not 1`,
            state: keys[current],
            action: name,
          };
          break;
        }
      }
      if (problem) break;
    }
  } catch (error) {
    problem = problemOf(error, phase, { state: current >= 0 ? keys[current] : undefined, action: currentAction });
  }

  const outcomesListed = target.length;
  const head: EnumerationHead = {
    stateKeys: keys,
    terminal: terminal.take(),
    actionNames,
    choiceStart: (choiceStart.push(choiceAction.length), choiceStart.take()),
    choiceAction: choiceAction.take(),
    outcomeStart: (outcomeStart.push(target.length), outcomeStart.take()),
    termNames: [...termIndex.keys()],
    startStates: Int32Array.from(startStates),
    startProbs: Float64Array.from(startProbs),
    capped,
    firstBeyondCap,
    problem,
    nondeterminism: [],
    outcomesListed,
  };
  if (!problem && !capped) recheckDeterminism(model, values, head, { target, prob, reward }, options);
  const targetChunks = target.take();
  // A term no outcome used has no column yet: zeros in chunks shaped like the target's.
  const zeros = () => targetChunks.map((chunk) => new Float64Array(chunk.length));
  return {
    head,
    target: targetChunks,
    prob: prob.take(),
    reward: reward.take(),
    terms: head.termNames.map((_, t) => termColumns[t]?.take() ?? zeros()),
  };
}

/** Read access to the outcome columns while they are still being filled. */
interface OutcomeReader {
  target: { at(k: number): number };
  prob: { at(k: number): number };
  reward: { at(k: number): number };
}

/**
 * Calls `actions` and `outcomes` again on evenly spread states and compares the answers with the
 * enumerated ones; a model that answers differently cannot be analysed exactly.
 */
function recheckDeterminism(
  model: ModelFunctions,
  values: unknown[],
  result: EnumerationHead,
  outcomes: OutcomeReader,
  options: EnumerationOptions,
): void {
  const stateCount = result.stateKeys.length;
  const picks = Math.min(options.recheckChoices, stateCount);
  if (picks <= 0) return;
  const stride = stateCount / picks;
  const render = (list: unknown[]) => list.map((a) => actionName(a, 'action')).join(', ');
  for (let i = 0; i < picks; i++) {
    const s = Math.floor(i * stride);
    if (result.terminal[s] !== 0) continue;
    const state = values[s];
    let phase: ModelFunction = 'actions';
    try {
      const list = listOf(model.actions!(state), 'the returned action list');
      const first = listedActions(result, s).join(', ');
      const second = render(list);
      if (first !== second) {
        result.nondeterminism.push({ phase, state: result.stateKeys[s], first: `[${first}]`, second: `[${second}]` });
        continue;
      }
      phase = 'outcomes';
      for (let c = result.choiceStart[s]; c < result.choiceStart[s + 1]; c++) {
        const action = list[c - result.choiceStart[s]];
        const again = listOf(model.outcomes!(state, action), 'the returned outcome list');
        const firstText = renderChoice(result, outcomes, c);
        const secondText = again
          .filter((o) => (o as { probability: number }).probability !== 0)
          .map((o) => {
            const out = o as { state: unknown; probability: number; reward: unknown };
            return `${canonicalKey(out.state)} p=${out.probability} r=${readReward(out.reward, undefined, undefined, false, 'reward')}`;
          })
          .join('; ');
        if (firstText !== secondText) {
          result.nondeterminism.push({
            phase,
            state: result.stateKeys[s],
            action: result.actionNames[result.choiceAction[c]],
            first: firstText,
            second: secondText,
          });
          break;
        }
      }
    } catch (error) {
      result.problem = problemOf(error, phase, { state: result.stateKeys[s] });
      return;
    }
  }
}

function listedActions(result: EnumerationHead, s: number): string[] {
  const out: string[] = [];
  for (let c = result.choiceStart[s]; c < result.choiceStart[s + 1]; c++)
    out.push(result.actionNames[result.choiceAction[c]]);
  return out;
}

function renderChoice(result: EnumerationHead, outcomes: OutcomeReader, c: number): string {
  const parts: string[] = [];
  for (let k = result.outcomeStart[c]; k < result.outcomeStart[c + 1]; k++) {
    parts.push(`${result.stateKeys[outcomes.target.at(k)]} p=${outcomes.prob.at(k)} r=${outcomes.reward.at(k)}`);
  }
  return parts.join('; ');
}

export interface RolloutOptions {
  episodes: number;
  seed: number;
  /** First episode index (batches of one run continue the numbering). */
  firstEpisode?: number;
  discount: number;
  horizon?: number;
  /** Cap on steps per episode without a horizon. */
  stepCap: number;
  declaredTerms: string[];
  /** Episodes (from the first) whose trajectories are fingerprinted for the determinism check. */
  fingerprintEpisodes: number;
  /** Count the transitions per (state key, action) and explore from the keys seen (the worker does it). */
  record?: RecordOptions;
  /** With `record`: keep the recorder in the child for a `record` job instead of exploring now (--jobs N, the first range). */
  holdRecording?: boolean;
  /** Log what a recorder would be fed instead of counting (--jobs N, the later ranges; transition-record.ts). */
  log?: RecordOptions;
  progress: Progress;
}

/**
 * Receives every step of the rollouts (the empirical model's counts, sandbox/transition-record.ts).
 * It is handed in by the worker, so rollouts without it pay nothing.
 */
export interface StepRecorder {
  /** An episode begins in `state`, whose terminal kind code is `code` (0: not terminal). */
  begin(state: unknown, code: number): void;
  /** The episode took `action` to `next` for `reward` (its declared terms' parts in `terms`). */
  step(action: string, next: unknown, reward: number, terms: readonly number[], code: number): void;
}

export interface RolloutRun {
  records: EpisodeRecords;
  /** Episodes with a non-finite reward (their return is NaN). */
  nonFiniteEpisodes: number;
  firstNonFinite?: RuntimeProblem;
  problem?: RuntimeProblem;
  /** FNV-1a hashes of the first episodes' trajectories (states, actions, rewards). */
  fingerprints: string[];
  /** How many episodes ran before a problem stopped the run. */
  completed: number;
  /** The transition counts, when `record` was asked for. */
  counts?: TransitionCounts;
  /** A problem of model code met while recording or exploring (the rollouts themselves went on). */
  countsProblem?: RuntimeProblem;
  /** The logged trajectories, when `log` was asked for. */
  log?: TrajectoryLog;
}

/**
 * Seeded rollouts under the uniformly random policy. The model draws from `rng` (stream 0 of the
 * episode), the policy from its own stream 1. A model with `outcomes` but no `sample` is sampled by
 * drawing an outcome by its probability.
 */
export function rolloutModel(model: ModelFunctions, options: RolloutOptions, recorder?: StepRecorder): RolloutRun {
  const { episodes, seed, discount, progress } = options;
  const firstEpisode = options.firstEpisode ?? 0;
  const limit = options.horizon ?? effectiveStepCap(discount, options.stepCap);
  const returns = new Float64Array(episodes);
  const lengths = new Int32Array(episodes);
  const ends = new Uint8Array(episodes);
  const generator = new Xoshiro128();
  const rng = createModelRng(generator);
  const chooser = new Xoshiro128();
  const strictTerms = options.declaredTerms.length > 0;
  const termIndex = strictTerms ? new Map(options.declaredTerms.map((t, i) => [t, i])) : undefined;
  const scratch: number[] = [];
  const fingerprints: string[] = [];
  let nonFiniteEpisodes = 0;
  let firstNonFinite: RuntimeProblem | undefined;
  let phase: ModelFunction = 'start';
  let e = 0;
  let t = 0;
  let state: unknown;
  let action: unknown;

  const actions = model.actions!;
  const terminalOf = model.terminal;
  const sample = model.sample;
  const startFunction = typeof model.start === 'function' ? (model.start as (rng: ModelRng) => unknown) : undefined;
  const startDistribution = model.startDistribution;

  try {
    for (e = 0; e < episodes; e++) {
      const episode = firstEpisode + e;
      generator.seedEpisode(seed, episode, 0);
      chooser.seedEpisode(seed, episode, 1);
      progress[2] = episode;
      t = 0;
      progress[3] = 0;
      phase = 'start';
      progress[1] = 1;
      progress[0]++;
      if (startFunction) state = startFunction(rng);
      else if (startDistribution !== undefined)
        state = drawStart(listOf(startDistribution, 'startDistribution'), generator);
      else state = structuredClone(model.start);
      let hash = e < options.fingerprintEpisodes ? fnv(0x811c9dc5, describeValue(state)) : 0;
      let total = 0;
      let weight = 1;
      let end = END_NONE;
      let nonFinite = false;
      let code = 0;
      if (terminalOf) {
        phase = 'terminal';
        code = terminalCode(terminalOf(state), 'the returned terminal kind');
      }
      recorder?.begin(state, code);
      while (code === 0) {
        if (t >= limit) {
          end = options.horizon === undefined ? END_STEP_CAP : END_NONE;
          break;
        }
        phase = 'actions';
        progress[1] = 2;
        progress[3] = t;
        progress[0]++;
        const list = actions(state);
        if (!Array.isArray(list)) listOf(list, 'the returned action list');
        const count = (list as unknown[]).length;
        if (count === 0) {
          return stopped({
            kind: 'dead-end',
            phase,
            message: 'actions() returned no action for a state that is not terminal',
            state: describeValue(state),
            episode,
            step: t,
          });
        }
        action = (list as unknown[])[chooser.nextInt(count)];
        phase = sample ? 'sample' : 'outcomes';
        progress[1] = sample ? 5 : 3;
        progress[0]++;
        const drawn = drawTransition(model, state, action, rng);
        const next = drawn.state;
        const reward = drawn.reward;
        if (recorder) scratch.length = 0;
        const r =
          typeof reward === 'number' ? reward : readReward(reward, termIndex, scratch, strictTerms, 'the reward');
        if (!Number.isFinite(r) && !nonFinite) {
          nonFinite = true;
          nonFiniteEpisodes++;
          firstNonFinite ??= {
            kind: 'non-finite-reward',
            phase,
            message: `the reward ${r}`,
            state: describeValue(state),
            action: String(action),
            episode,
            step: t,
          };
        }
        total += weight * r;
        weight *= discount;
        if (hash !== 0) hash = fnv(fnv(hash, String(action)), `${r}|${describeValue(next)}`);
        state = next;
        t++;
        code = terminalCode(drawn.terminal, 'the returned terminal kind');
        if (code === 0 && terminalOf) {
          phase = 'terminal';
          progress[1] = 4;
          code = terminalCode(terminalOf(state), 'the returned terminal kind');
        }
        recorder?.step(typeof action === 'string' ? action : String(action), state, r, scratch, code);
      }
      if (code !== 0) end = code;
      returns[e] = nonFinite ? NaN : total;
      lengths[e] = t;
      ends[e] = end;
      if (e < options.fingerprintEpisodes) fingerprints.push((hash >>> 0).toString(16));
    }
  } catch (error) {
    return stopped(
      problemOf(error, phase, {
        state: describeValue(state),
        action: action === undefined ? undefined : String(action),
        episode: firstEpisode + e,
        step: t,
      }),
    );
  }
  return { records: { returns, lengths, ends }, nonFiniteEpisodes, firstNonFinite, fingerprints, completed: episodes };

  function stopped(problem: RuntimeProblem): RolloutRun {
    return {
      records: { returns: returns.slice(0, e), lengths: lengths.slice(0, e), ends: ends.slice(0, e) },
      nonFiniteEpisodes,
      firstNonFinite,
      problem,
      fingerprints,
      completed: e,
    };
  }
}

/**
 * One sampled step from `state` under `action`: `sample` when the model has it, else an outcome of
 * `outcomes` drawn by its probability. `terminal` is the kind `sample` said (checked by the caller).
 */
export function drawTransition(
  model: ModelFunctions,
  state: unknown,
  action: unknown,
  rng: ModelRng,
): { state: unknown; reward: unknown; terminal?: unknown } {
  if (model.sample) {
    const result = model.sample(state, action, rng) as { state?: unknown; reward?: unknown; terminal?: unknown };
    if (typeof result !== 'object' || result === null || !('state' in result)) {
      if (result && typeof (result as { then?: unknown }).then === 'function') {
        throw new MalformedValue('the result is a Promise; model functions must return their value synchronously');
      }
      throw new MalformedValue(`the result is ${describeValue(result)}; expected { state, reward, terminal? }`);
    }
    return result as { state: unknown; reward: unknown; terminal?: unknown };
  }
  const drawn = drawOutcome(
    listOf(model.outcomes!(state, action), 'the returned outcome list'),
    rng.generator.nextFloat(),
  );
  return { state: drawn.state, reward: drawn.reward };
}

export function drawStart(entries: unknown[], generator: Xoshiro128): unknown {
  const u = generator.nextFloat();
  let cumulative = 0;
  for (const entry of entries) {
    const e = entry as { state: unknown; probability: number };
    cumulative += e.probability;
    if (u < cumulative) return structuredClone(e.state);
  }
  return structuredClone((entries[entries.length - 1] as { state: unknown }).state);
}

export function drawOutcome(outs: unknown[], u: number): { state: unknown; reward: unknown } {
  let cumulative = 0;
  for (let i = 0; i < outs.length; i++) {
    const out = outs[i] as { state: unknown; probability: unknown; reward: unknown };
    if (typeof out !== 'object' || out === null || typeof out.probability !== 'number') {
      throw new MalformedValue(`outcome ${i} is ${describeValue(out)}; expected { state, probability, reward }`);
    }
    cumulative += out.probability;
    if (u < cumulative || i === outs.length - 1) return out;
  }
  throw new MalformedValue('outcomes() returned an empty list; every action needs at least one outcome');
}

/** An outcome without `probability`: its own field names usually show the misnamed one. */
function noProbability(out: object, index: number): string {
  const fields = Object.keys(out);
  const own = fields.length > 0 ? ` (its fields: ${fields.slice(0, 8).join(', ')})` : '';
  return `outcome ${index} has no probability${own}; expected { state, probability, reward }`;
}

/** FNV-1a, 32 bits (Fowler, Noll and Vo), over the UTF-16 code units of `text`. */
function fnv(hash: number, text: string): number {
  let h = hash;
  for (let i = 0; i < text.length; i++) {
    h ^= text.charCodeAt(i);
    h = Math.imul(h, 0x01000193);
  }
  return h | 1;
}
