/**
 * The sandbox child: a Node process of its own (started by host.ts under Node's permission model,
 * with an empty environment and an OS memory limit) that loads one bundled model and answers the
 * host's requests over the IPC channel. Each request does a whole job (enumeration, a batch of
 * rollouts, or learning) and answers with typed arrays, so crossing processes costs once per job, not per call.
 *
 * Before the model loads, everything that reaches the network or other processes is replaced, and
 * the checks that let an honest model stop itself with its call and line are installed: a counter
 * around every model call (liveness beats for the host, the job's time limit) and a check in every
 * loop body (an endless loop, the heap limit). Model code can defeat these checks; the host's own
 * limits do not depend on them.
 */
import { writeSync } from 'node:fs';
import { createRequire } from 'node:module';
import { getHeapStatistics } from 'node:v8';
import { compileFunction } from 'node:vm';
import {
  BEAT_FD,
  COLUMN_FD,
  LOOP_CHECK,
  MODEL_SCRIPT_NAME,
  OUTPUT_MARK,
  type ChildLimits,
  type HostRequest,
  type ModelDescription,
  type RandomnessCall,
  type WorkerReply,
} from './protocol';
import {
  describeValue,
  enumerateInChunks,
  ModelExitCall,
  rolloutModel,
  SandboxLimitReached,
  thrownProblem,
  thrownStack,
  thrownText,
  type EnumerationOptions,
  type ModelFunctions,
  type RolloutOptions,
} from './runtime';
import { TrajectoryLogger, TransitionRecorder } from './transition-record';
import { decideModel, learnModel, measureModel, trainModel, type TrainedSession } from './learn';
import { writeColumns } from './enumeration-columns';

// What the sandbox itself needs, taken before model code can replace any of it.
const send = process.send!.bind(process) as (message: WorkerReply, callback?: () => void) => boolean;
const reallyExit = (process as unknown as { reallyExit: (code: number) => never }).reallyExit.bind(process);
const realExit = (code: number): void => reallyExit(code);
const now = performance.now.bind(performance);
// Created now: the streams are built lazily on first use, from classes that are locked below.
// Their write is kept for the end-of-job mark (see markOutput).
const outputStreams = [process.stdout, process.stderr].map((stream) => ({
  stream,
  fd: stream === process.stdout ? 1 : 2,
  write: stream.write.bind(stream) as (text: string) => boolean,
}));

/**
 * Replaces the functions of a module or prototype (those whose names `only` matches, if given) with
 * ones that refuse, naming what was refused.
 */
function refuseAll(target: object | undefined, what: string, only?: RegExp): void {
  if (!target) return;
  for (const key of Object.getOwnPropertyNames(target)) {
    if (key === 'constructor' || key === 'prototype' || (only && !only.test(key))) continue;
    const descriptor = Object.getOwnPropertyDescriptor(target, key);
    if (!descriptor || typeof descriptor.value !== 'function' || !descriptor.configurable) continue;
    const refusing = function refused(): never {
      throw new Error(
        `${what}.${key} is not available to model code (the sandbox has no network and starts no processes)`,
      );
    };
    try {
      Object.defineProperty(target, key, {
        value: refusing,
        writable: false,
        configurable: false,
        enumerable: descriptor.enumerable,
      });
    } catch {
      // A property that cannot be redefined stays; the permission model still applies.
    }
  }
}

const OPENING =
  /^(connect|listen|bind|send|request|open|resolve|lookup|reverse|addMembership|addSourceSpecificMembership|setServers)/;

/**
 * Node 20's permission model covers files, child processes and workers but not the network, so the
 * network modules are replaced here, also in the classes that existing objects (the stdout stream)
 * lead to. Child processes and workers are refused again for a clear message where the permission
 * model is missing.
 */
function lockDown(): void {
  const load = createRequire(__filename);
  const blocked = [
    'net',
    'tls',
    'http',
    'https',
    'http2',
    'dgram',
    'dns',
    'dns/promises',
    'child_process',
    'cluster',
    'worker_threads',
    'inspector',
    'inspector/promises',
  ];
  for (const id of blocked) {
    let exported: Record<string, unknown> | undefined;
    try {
      exported = load(id) as Record<string, unknown>;
    } catch {
      continue;
    }
    // The classes first: refusing the module's functions replaces the references to them. Only
    // the methods that open something: the stdout and stderr streams are net.Socket objects too.
    for (const value of Object.values(exported)) {
      if (typeof value === 'function' && value.prototype)
        refuseAll(value.prototype as object, `${id}.${value.name || 'class'}`, OPENING);
    }
    refuseAll(exported, id);
  }
  // The stdout and stderr handles (pipes) must not open new connections either.
  for (const stream of [process.stdout, process.stderr]) {
    const handle = (stream as unknown as { _handle?: object })._handle;
    const proto = handle ? Object.getPrototypeOf(handle) : undefined;
    for (const key of ['connect', 'bind', 'listen', 'open']) {
      if (proto && typeof proto[key] === 'function') {
        try {
          Object.defineProperty(proto, key, { value: () => -1, writable: false, configurable: false });
        } catch {
          // Left as is.
        }
      }
    }
  }
  for (const name of ['fetch', 'WebSocket', 'EventSource']) {
    try {
      delete (globalThis as Record<string, unknown>)[name];
    } catch {
      // A non-configurable global stays.
    }
  }
  const refuse = (what: string) => () => {
    throw new ModelExitCall(what);
  };
  process.exit = ((code?: number) => {
    throw new ModelExitCall(`process.exit(${code ?? ''})`);
  }) as typeof process.exit;
  process.kill = refuse('process.kill') as typeof process.kill;
  process.abort = refuse('process.abort') as typeof process.abort;
  const internals = process as unknown as Record<string, unknown>;
  for (const name of [
    '_kill',
    '_debugProcess',
    'reallyExit',
    'binding',
    '_linkedBinding',
    'dlopen',
    'setuid',
    'setgid',
    'seteuid',
    'setegid',
    'setgroups',
    'initgroups',
    'chdir',
  ]) {
    if (typeof internals[name] === 'function') internals[name] = refuse(`process.${name}`);
  }
  const os = load('os') as Record<string, unknown>;
  os.setPriority = refuse('os.setPriority');
}

// Unseeded randomness and clocks are counted while model code runs; the first call's stack tells where.
const randomness = new Map<string, RandomnessCall>();
function watch(target: object | undefined, property: string, api: string): void {
  if (!target) return;
  const original = (target as Record<string, unknown>)[property];
  const descriptor = Object.getOwnPropertyDescriptor(target, property);
  if (typeof original !== 'function' || (descriptor && !descriptor.configurable && !descriptor.writable)) return;
  const watched = function watched(this: unknown, ...args: unknown[]) {
    const seen = randomness.get(api);
    if (seen) seen.count++;
    else randomness.set(api, { api, count: 1, stack: new Error().stack ?? '' });
    return (original as (...a: unknown[]) => unknown).apply(this, args);
  };
  // Some of these are getter-only properties; redefine them as plain values.
  Object.defineProperty(target, property, {
    value: watched,
    writable: true,
    configurable: true,
    enumerable: descriptor?.enumerable ?? true,
  });
}

function watchRandomness(): void {
  watch(Math, 'random', 'Math.random');
  watch(Date, 'now', 'Date.now');
  watch(globalThis.performance, 'now', 'performance.now');
  watch(globalThis.crypto, 'getRandomValues', 'crypto.getRandomValues');
  watch(globalThis.crypto, 'randomUUID', 'crypto.randomUUID');
  // The module object itself (a namespace import would be a frozen copy that patching cannot reach).
  const nodeCrypto = require('node:crypto') as Record<string, unknown>;
  for (const name of ['randomInt', 'randomBytes', 'randomUUID', 'randomFillSync', 'getRandomValues'])
    watch(nodeCrypto, name, `crypto.${name}`);
}

// ---- Limits the child checks itself (an honest model is stopped with its call and line) ----

let limits: ChildLimits = { callTimeoutMs: 2000, jobTimeoutMs: 120_000, memoryMb: 512 };
let jobBegan = now();
/** Model calls started, counted by the wrappers around the model functions. */
let calls = 0;
let callCountdown = 1;
let callStride = 1;
let lastCallCheck = 0;
let loopCountdown = 1024;
let loopStride = 1024;
let lastLoopCheck = 0;
let lastBeat = 0;
/** The call count the loop check last saw change, and when. */
let seenCalls = -1;
let seenAt = 0;
const beatByte = new Uint8Array([1]);

/**
 * Clock reads are spaced by counting: the stride doubles while reads come less than `low` ms apart
 * and shrinks when they come more than `high` ms apart, so a fast model reads the clock every few ms
 * and a slow one once per call, never once per fast call.
 */
function nextStride(stride: number, elapsed: number, low: number, high: number): number {
  if (elapsed < low) return Math.min(stride * 2, 1 << 20);
  if (elapsed > high) return Math.max(1, stride >> 2);
  return stride;
}

function checkJobTime(at: number): void {
  if (at - jobBegan > limits.jobTimeoutMs) {
    const seconds = Math.round(limits.jobTimeoutMs / 1000);
    throw new SandboxLimitReached(
      'timeout',
      `was still running when the job's time limit of ${seconds} s ran out (the model is too slow or too large)`,
    );
  }
}

/** Tells the host the model is still making calls (at most every 100 ms unless forced). */
function beat(at: number, force = false): void {
  if (at - lastBeat < 100 && !force) return;
  lastBeat = at;
  try {
    writeSync(BEAT_FD, beatByte);
  } catch {
    // A full pipe means the host has beats enough.
  }
}

function callCheck(): void {
  const at = now();
  callStride = nextStride(callStride, at - lastCallCheck, 2, 20);
  callCountdown = callStride;
  lastCallCheck = at;
  beat(at);
  // While loop checks run they stop the job inside the call that is using the time, which names it better.
  if (at - lastLoopCheck > 50) checkJobTime(at);
}

/** Called first in every loop body of model code (bundle.ts inserts the calls). */
function loopCheck(): void {
  if (--loopCountdown > 0) return;
  const at = now();
  loopStride = nextStride(loopStride, at - lastLoopCheck, 0.5, 5);
  loopCountdown = loopStride;
  lastLoopCheck = at;
  if (calls !== seenCalls) {
    seenCalls = calls;
    seenAt = at;
  } else if (at - seenAt > limits.callTimeoutMs) {
    throw new SandboxLimitReached('timeout', `did not return within ${limits.callTimeoutMs} ms (an endless loop?)`);
  }
  checkJobTime(at);
  if (getHeapStatistics().used_heap_size > limits.memoryMb * 0.9 * 1024 * 1024) {
    throw new SandboxLimitReached('memory', `ran out of memory (the limit is ${limits.memoryMb} MB of heap)`);
  }
}

/** The model's functions, each behind the call counter. */
function counted(exported: Record<string, unknown>): ModelFunctions {
  const model: ModelFunctions = { start: exported.start, startDistribution: exported.startDistribution };
  const wrap = <F extends (...args: never[]) => unknown>(f: unknown): F | undefined => {
    if (typeof f !== 'function') return f as undefined;
    const fn = f as (...args: unknown[]) => unknown;
    return ((a: unknown, b: unknown, c: unknown) => {
      calls++;
      if (--callCountdown <= 0) callCheck();
      return fn.call(exported, a, b, c);
    }) as unknown as F;
  };
  model.actions = wrap(exported.actions);
  model.outcomes = wrap(exported.outcomes);
  model.terminal = wrap(exported.terminal);
  model.sample = wrap(exported.sample);
  model.stateKey = wrap(exported.stateKey);
  if (typeof exported.start === 'function') model.start = wrap(exported.start);
  return model;
}

function beginJob(): void {
  jobBegan = now();
  lastCallCheck = jobBegan;
  lastLoopCheck = jobBegan;
  beat(jobBegan, true);
  seenCalls = -1;
}

// ---- The jobs ----

let model: ModelFunctions | undefined;

function takeRandomness(): RandomnessCall[] {
  const list = [...randomness.values()];
  randomness.clear();
  return list;
}

function load(code: string, specPath: string): WorkerReply {
  const module = { exports: {} as Record<string, unknown> };
  try {
    const run = compileFunction(code, ['exports', 'require', 'module', '__filename', '__dirname'], {
      filename: MODEL_SCRIPT_NAME,
    });
    run(module.exports, createRequire(specPath), module, specPath, specPath.replace(/[\\/][^\\/]*$/, ''));
  } catch (error) {
    return { type: 'problem', problem: thrownProblem(error, 'load'), randomness: takeRandomness() };
  }
  const exported = (module.exports.default ?? module.exports) as Record<string, unknown>;
  if (typeof exported !== 'object' || exported === null) {
    return {
      type: 'problem',
      problem: {
        kind: 'malformed',
        phase: 'load',
        message: `the default export is ${describeValue(exported)}; expected defineMdp({...})`,
      },
      randomness: takeRandomness(),
    };
  }
  const plain = (value: unknown) => {
    try {
      return value === undefined ? undefined : JSON.parse(JSON.stringify(value));
    } catch {
      return describeValue(value);
    }
  };
  const kindOf = (value: unknown): 'function' | 'value' | 'absent' =>
    typeof value === 'function' ? 'function' : value === undefined ? 'absent' : 'value';
  try {
    model = counted(exported);
    const description: ModelDescription = {
      name: plain(exported.name),
      objective: plain(exported.objective),
      discount: typeof exported.discount === 'number' ? exported.discount : plain(exported.discount),
      horizon: typeof exported.horizon === 'number' ? exported.horizon : plain(exported.horizon),
      rewardTerms: plain(exported.rewardTerms),
      members: {
        start: kindOf(exported.start),
        startDistribution: kindOf(exported.startDistribution),
        actions: kindOf(exported.actions),
        outcomes: kindOf(exported.outcomes),
        terminal: kindOf(exported.terminal),
        sample: kindOf(exported.sample),
        stateKey: kindOf(exported.stateKey),
      },
    };
    return { type: 'loaded', description, randomness: takeRandomness() };
  } catch (error) {
    // The default export's getters are model code too.
    return { type: 'problem', problem: thrownProblem(error, 'load'), randomness: takeRandomness() };
  }
}

/** Progress of the runtime: only read inside this process, so there is nothing for the host to trust. */
const progress = new Int32Array(5);

function handle(request: HostRequest): WorkerReply {
  beginJob();
  if (request.type === 'load') {
    limits = request.limits;
    // A warm child loads the model again: nothing of the last spec's jobs carries over.
    session = undefined;
    heldRecorder = undefined;
    return load(request.code, request.specPath);
  }
  if (!model) return { type: 'fault', message: 'no model is loaded' };
  if (request.type === 'enumerate') {
    const options: EnumerationOptions = { ...request.options, progress };
    const chunks = enumerateInChunks(model, options);
    const keys = writeColumns(COLUMN_FD, chunks, chunks.head.stateKeys);
    return { type: 'enumerated', head: { ...chunks.head, stateKeys: [] }, keys, randomness: takeRandomness() };
  }
  if (request.type === 'learn') {
    return { type: 'learned', run: learnModel(model, request.options, progress), randomness: takeRandomness() };
  }
  if (request.type === 'train') {
    const trained = trainModel(model, request.options, progress);
    session = trained.session;
    return { type: 'trained', trained: trained.trained, problem: trained.problem, randomness: takeRandomness() };
  }
  if (request.type === 'measure') {
    const measured = measureModel(model, request.options, progress);
    return { type: 'measured', part: measured.part, problem: measured.problem, randomness: takeRandomness() };
  }
  if (request.type === 'decide') {
    if (!session) return { type: 'fault', message: 'no learner was trained in this process' };
    const decided = decideModel(session, request.measuredEpisodes);
    session = undefined;
    return { type: 'decided', decision: decided.decision, problem: decided.problem, randomness: takeRandomness() };
  }
  if (request.type === 'record') {
    const recorder = heldRecorder;
    heldRecorder = undefined;
    if (!recorder) return { type: 'fault', message: 'no recording is held in this process' };
    for (const log of request.logs) recorder.replay(log);
    recorder.explore(request.seed, request.declaredTerms);
    return {
      type: 'recorded',
      counts: recorder.result(),
      countsProblem: recorder.problem,
      randomness: takeRandomness(),
    };
  }
  const options: RolloutOptions = { ...request.options, progress };
  const recorder = options.record
    ? new TransitionRecorder(model, options.record, options.declaredTerms, progress)
    : undefined;
  const logger = options.log
    ? new TrajectoryLogger(model, options.log, options.declaredTerms.length, progress)
    : undefined;
  const run = rolloutModel(model, options, recorder ?? logger);
  if (logger) run.log = logger.result();
  if (recorder && options.holdRecording) heldRecorder = run.problem ? undefined : recorder;
  else if (recorder && !run.problem) {
    recorder.explore(options.seed, options.declaredTerms);
    run.counts = recorder.result();
    run.countsProblem = recorder.problem;
  }
  return { type: 'rolled', run, randomness: takeRandomness() };
}

/** The learner of the last `train` job, for the `decide` job that follows it. */
let session: TrainedSession | undefined;
/** The recorder of the first range's rollouts, for the `record` job that follows it (--jobs N). */
let heldRecorder: TransitionRecorder | undefined;

/** An error outside any model call: report it, then end this process (its state is unknown). */
function fault(error: unknown): void {
  try {
    send({ type: 'fault', message: thrownText(error), stack: thrownStack(error) }, () => realExit(1));
  } catch {
    realExit(1);
  }
}

lockDown();
watchRandomness();
Object.defineProperty(globalThis, LOOP_CHECK, {
  value: loopCheck,
  writable: false,
  configurable: false,
  enumerable: false,
});
(globalThis as Record<string, unknown>).defineMdp = (definition: unknown) => definition;
process.on('uncaughtException', fault);
process.on('unhandledRejection', fault);
// The host is gone (or closed the sandbox): nothing is left to answer.
process.on('disconnect', () => realExit(0));
process.on('message', (request: HostRequest) => {
  let reply: WorkerReply;
  try {
    reply = handle(request);
  } catch (error) {
    reply = { type: 'problem', problem: thrownProblem(error, 'load'), randomness: takeRandomness() };
  }
  beat(now(), true);
  markOutput();
  send(reply);
});

/**
 * Ends the job's output on both streams (see OUTPUT_MARK). The mark goes through the stream, so it
 * queues behind what model code printed and the pipe has not yet taken (a busy host reads late);
 * written to the descriptor directly it would overtake that output. A stream model code ended gets
 * the mark on its descriptor, and one that cannot take it is skipped.
 */
function markOutput(): void {
  for (const { stream, fd, write } of outputStreams) {
    try {
      if (stream.destroyed || stream.writableEnded) writeSync(fd, OUTPUT_MARK);
      else write(OUTPUT_MARK);
    } catch {
      // The host stops waiting for this stream's mark after a short while.
    }
  }
}
