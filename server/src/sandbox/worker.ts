/**
 * The sandbox worker: loads one bundled model and answers the host's requests. Each request does a
 * whole job (enumeration, a batch of rollouts, or learning) and answers with typed arrays, so the cost of
 * crossing threads is paid once per job, never per model call.
 */
import { createRequire } from 'node:module';
import { compileFunction } from 'node:vm';
import { parentPort, workerData } from 'node:worker_threads';
import {
  describeValue,
  enumerateModel,
  ModelExitCall,
  rolloutModel,
  type EnumerationOptions,
  type ModelFunctions,
  type RolloutOptions,
  type RuntimeProblem,
} from './runtime';
import { learnModel } from './learn';
import { MODEL_SCRIPT_NAME, type HostRequest, type ModelDescription, type RandomnessCall, type WorkerReply } from './protocol';

const progress = new Int32Array(workerData.progress as SharedArrayBuffer);
const stateText = new Uint16Array(workerData.stateText as SharedArrayBuffer);

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
  Object.defineProperty(target, property, { value: watched, writable: true, configurable: true, enumerable: descriptor?.enumerable ?? true });
}
watch(Math, 'random', 'Math.random');
watch(Date, 'now', 'Date.now');
watch(globalThis.performance, 'now', 'performance.now');
watch(globalThis.crypto, 'getRandomValues', 'crypto.getRandomValues');
watch(globalThis.crypto, 'randomUUID', 'crypto.randomUUID');
// The module object itself (a namespace import would be a frozen copy that patching cannot reach).
const nodeCrypto = require('node:crypto') as Record<string, unknown>;
for (const name of ['randomInt', 'randomBytes', 'randomUUID', 'randomFillSync', 'getRandomValues']) watch(nodeCrypto, name, `crypto.${name}`);

// Ending the process from model code ends only this thread; make it an error with a stack instead.
const refuse = (what: string) => () => {
  throw new ModelExitCall(what);
};
process.exit = ((code?: number) => {
  throw new ModelExitCall(`process.exit(${code ?? ''})`);
}) as typeof process.exit;
process.kill = refuse('process.kill') as typeof process.kill;
process.abort = refuse('process.abort') as typeof process.abort;
(globalThis as Record<string, unknown>).defineMdp = (definition: unknown) => definition;

let model: ModelFunctions | undefined;

function writeStateText(key: string): void {
  const length = Math.min(key.length, stateText.length);
  for (let i = 0; i < length; i++) stateText[i] = key.charCodeAt(i);
  progress[4] = length;
}

function takeRandomness(): RandomnessCall[] {
  const list = [...randomness.values()];
  randomness.clear();
  return list;
}

function load(code: string, specPath: string): WorkerReply {
  const module = { exports: {} as Record<string, unknown> };
  try {
    progress[1] = 0;
    progress[0]++;
    const run = compileFunction(code, ['exports', 'require', 'module', '__filename', '__dirname'], { filename: MODEL_SCRIPT_NAME });
    run(module.exports, createRequire(specPath), module, specPath, specPath.replace(/[\\/][^\\/]*$/, ''));
  } catch (error) {
    return { type: 'problem', problem: thrown(error), randomness: takeRandomness() };
  }
  const exported = (module.exports.default ?? module.exports) as Record<string, unknown>;
  if (typeof exported !== 'object' || exported === null) {
    return {
      type: 'problem',
      problem: { kind: 'malformed', phase: 'load', message: `the default export is ${describeValue(exported)}; expected defineMdp({...})` },
      randomness: takeRandomness(),
    };
  }
  model = exported as ModelFunctions;
  const plain = (value: unknown) => {
    try {
      return value === undefined ? undefined : JSON.parse(JSON.stringify(value));
    } catch {
      return describeValue(value);
    }
  };
  const kindOf = (value: unknown): 'function' | 'value' | 'absent' =>
    typeof value === 'function' ? 'function' : value === undefined ? 'absent' : 'value';
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
    },
  };
  return { type: 'loaded', description, randomness: takeRandomness() };
}

function thrown(error: unknown): RuntimeProblem {
  if (error instanceof ModelExitCall) return { kind: 'exit', phase: 'load', message: error.message, stack: error.stack };
  if (error instanceof Error) return { kind: 'threw', phase: 'load', message: `${error.name}: ${error.message}`, stack: error.stack };
  return { kind: 'threw', phase: 'load', message: `threw ${describeValue(error)}` };
}

function handle(request: HostRequest): void {
  if (request.type === 'load') {
    parentPort!.postMessage(load(request.code, request.specPath));
    return;
  }
  if (!model) throw new Error('no model loaded');
  if (request.type === 'enumerate') {
    const options: EnumerationOptions = { ...request.options, progress, onExpand: writeStateText };
    const result = enumerateModel(model, options);
    const transfer = [
      result.terminal.buffer,
      result.choiceStart.buffer,
      result.choiceAction.buffer,
      result.outcomeStart.buffer,
      result.outcomeTarget.buffer,
      result.outcomeProb.buffer,
      result.outcomeReward.buffer,
      ...result.termRewards.map((column) => column.buffer),
    ] as ArrayBuffer[];
    parentPort!.postMessage({ type: 'enumerated', result, randomness: takeRandomness() } satisfies WorkerReply, transfer);
    return;
  }
  if (request.type === 'learn') {
    const run = learnModel(model, request.options, progress);
    const { returns, lengths, ends } = run.evaluation;
    parentPort!.postMessage({ type: 'learned', run, randomness: takeRandomness() } satisfies WorkerReply, [returns.buffer, lengths.buffer, ends.buffer] as ArrayBuffer[]);
    return;
  }
  const options: RolloutOptions = { ...request.options, progress };
  const run = rolloutModel(model, options);
  const { returns, lengths, ends } = run.records;
  parentPort!.postMessage({ type: 'rolled', run, randomness: takeRandomness() } satisfies WorkerReply, [
    returns.buffer,
    lengths.buffer,
    ends.buffer,
  ] as ArrayBuffer[]);
}

parentPort!.on('message', (request: HostRequest) => handle(request));
