/**
 * The host side of the sandbox: starts a child process for one model (launch.ts: Node's permission
 * model, an empty environment, an OS memory limit), sends it whole jobs over the IPC channel, and
 * turns everything that can go wrong in model code (a throw, a malformed value, an endless loop,
 * running out of memory, an abort, a kill) into a ModelFailure with a source location. The time
 * limits are enforced here, by timers of this process that kill the child: nothing the model can
 * write extends them. A child whose job went well is kept warm for the next load of the same bundle.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { createHash } from 'node:crypto';
import { buildSync } from 'esbuild';
import { closeSync, existsSync, mkdtempSync, openSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import type { Readable } from 'node:stream';
import { bundleModel, locateStack, type ModelBundle, type SourceLocation } from './bundle';
import { emptyColumnFile, readColumns } from './enumeration-columns';
import type { LearningSummary } from '../analysis/rollout-stats';
import type { TransitionCounts } from '../model/empirical';
import type { LearnedTable, LearnJobOptions, LearnRun, MeasuredPart, MeasureJobOptions, TrainedPart } from './learn';
import type { TrajectoryLog } from './transition-record';
import { launchPlan } from './launch';
import {
  BEAT_FD,
  MODEL_SCRIPT_NAME,
  OUTPUT_MARK,
  type HostRequest,
  type ModelDescription,
  type RandomnessCall,
  type WorkerReply,
} from './protocol';
import type { Enumeration, ModelFunction, RolloutRun, RuntimeProblem } from './runtime';

export interface SandboxLimits {
  /** A single model call that runs longer than this (wall clock) is stopped as a hang. */
  callTimeoutMs: number;
  /** Heap limit of the child (old generation), in MB; the whole process gets an OS limit of about twice that. */
  memoryMb: number;
  /** Wall-clock limit of one whole job (an enumeration, a batch of rollouts), however busy the model is. */
  jobTimeoutMs: number;
}

export const DEFAULT_LIMITS: SandboxLimits = { callTimeoutMs: 2000, memoryMb: 512, jobTimeoutMs: 120_000 };

/** Anything that went wrong in model code, located in the user's source where possible. */
export interface ModelFailure {
  kind: RuntimeProblem['kind'] | 'timeout' | 'memory' | 'crashed' | 'bundle' | 'cancelled';
  /** The model function that ran, or the whole job when the host alone saw the failure. */
  phase: ModelFunction | 'enumeration' | 'rollouts';
  message: string;
  location?: SourceLocation;
  state?: string;
  action?: string;
  episode?: number;
  step?: number;
}

/** A call of an unseeded random source, with the first call's source location. */
export interface RandomnessUse {
  api: string;
  count: number;
  location?: SourceLocation;
}

interface Outcome<T> {
  value?: T;
  failure?: ModelFailure;
  randomness: RandomnessUse[];
  /** Set when the start failed (the sandbox is closed then): what model code printed, and the launch notices. */
  output?: string;
  notices?: string[];
}

/** Longest message text taken from the child (model code chooses it). */
const MESSAGE_LIMIT = 400;
/** Model output kept per sandbox, and shown. */
const OUTPUT_KEPT = 64 * 1024;
const OUTPUT_SHOWN = 4000;
/** Idle children kept warm, and for how long. */
const IDLE_CHILDREN = 2;
const IDLE_MS = 60_000;

export function clip(text: string, limit = MESSAGE_LIMIT): string {
  return text.length > limit ? `${text.slice(0, limit - 1)}…` : text;
}

let childScriptPath: string | undefined;

/**
 * The child's script: the bundled `sandbox-worker.js` next to the running bundle (dist/), or, when
 * running from source (tests), `worker.ts` bundled on the fly into a temporary folder.
 */
function childScript(): string {
  const built = join(__dirname, 'sandbox-worker.js');
  if (existsSync(built)) return built;
  if (childScriptPath && existsSync(childScriptPath)) return childScriptPath;
  const output = buildSync({
    entryPoints: [join(__dirname, 'worker.ts')],
    bundle: true,
    platform: 'node',
    format: 'cjs',
    target: 'node20',
    write: false,
    logLevel: 'silent',
  });
  const folder = mkdtempSync(join(tmpdir(), 'episcope-sandbox-'));
  childScriptPath = join(folder, 'sandbox-worker.js');
  writeFileSync(childScriptPath, output.outputFiles[0].text);
  process.once('exit', () => rmSync(folder, { recursive: true, force: true }));
  return childScriptPath;
}

/**
 * How long a reply waits for the output printed before it (see OUTPUT_MARK). The mark follows
 * the output at once unless model code closed a stream, so the wait is only spent then; it is
 * long enough that a machine under load (several children, load average 8) loses no output.
 */
const OUTPUT_WAIT_MS = 3000;

/**
 * Removes end-of-job marks from one output stream and counts them. A mark split across two chunks
 * is held back until the rest arrives.
 */
export class MarkCounter {
  seen = 0;
  ended = false;
  private held = '';

  strip(chunk: string): string {
    const parts = (this.held + chunk).split(OUTPUT_MARK);
    this.seen += parts.length - 1;
    let text = parts.join('');
    this.held = '';
    for (let k = Math.min(OUTPUT_MARK.length - 1, text.length); k > 0; k--) {
      if (text.endsWith(OUTPUT_MARK.slice(0, k))) {
        this.held = text.slice(-k);
        text = text.slice(0, -k);
        break;
      }
    }
    return text;
  }

  /** What was held back when the stream ends. */
  rest(): string {
    const text = this.held;
    this.held = '';
    return text;
  }
}

/**
 * A fresh temporary file, open for reading and writing and already unlinked: it leaves nothing on
 * disk whatever happens, and only the two processes holding its descriptor can reach it.
 */
function openColumnFile(): number {
  const folder = mkdtempSync(join(tmpdir(), 'episcope-columns-'));
  const path = join(folder, 'columns');
  try {
    return openSync(path, 'w+', 0o600);
  } finally {
    try {
      rmSync(folder, { recursive: true, force: true });
    } catch {
      // Where an open file cannot be removed (Windows), the folder is removed at exit.
      process.once('exit', () => rmSync(folder, { recursive: true, force: true }));
    }
  }
}

/** One child process and what the host reads from it. */
class Child {
  readonly process: ChildProcess;
  readonly notices: string[];
  output = '';
  outputDropped = 0;
  lastBeat = Date.now();
  exited = false;
  exitCode: number | null = null;
  exitSignal: NodeJS.Signals | null = null;
  onMessage?: (message: unknown) => void;
  onExit?: () => void;
  /** Replies received from this process, and the end-of-job marks seen on stdout and stderr. */
  replies = 0;
  private readonly marks: MarkCounter[] = [];
  private readonly waiters = new Set<() => void>();
  /** This process's descriptor of the column file the child writes enumerations to (COLUMN_FD there). */
  readonly columnFd: number;

  constructor(
    readonly key: string,
    folder: string,
    memoryMb: number,
  ) {
    const script = childScript();
    const plan = launchPlan(script, [folder, script], memoryMb);
    this.notices = plan.notices;
    this.columnFd = openColumnFile();
    this.process = spawn(plan.command, plan.args, {
      env: plan.env,
      cwd: folder,
      stdio: ['ignore', 'pipe', 'pipe', 'ipc', 'pipe', this.columnFd],
      serialization: 'advanced',
      windowsHide: true,
    });
    const streams = [this.process.stdout!, this.process.stderr!];
    streams.forEach((stream) => {
      const marks = new MarkCounter();
      this.marks.push(marks);
      stream.setEncoding('utf8');
      stream.on('data', (chunk: string) => {
        this.keep(marks.strip(chunk));
        this.wakeWaiters();
      });
      stream.on('end', () => {
        this.keep(marks.rest());
        marks.ended = true;
        this.wakeWaiters();
      });
    });
    (this.process.stdio[BEAT_FD] as Readable).on('data', () => {
      this.lastBeat = Date.now();
    });
    this.process.on('message', (message) => this.onMessage?.(message));
    // A failed spawn (no node binary) is reported as an exit.
    this.process.on('error', () => this.markExited());
    this.process.on('exit', (code, signal) => {
      this.exitCode = code;
      this.exitSignal = signal;
      this.markExited();
    });
    live.add(this);
  }

  private keep(text: string): void {
    const room = OUTPUT_KEPT - this.output.length;
    if (room > 0) this.output += text.slice(0, room);
    this.outputDropped += Math.max(0, text.length - Math.max(0, room));
  }

  /**
   * Resolves once stdout and stderr have passed the mark the child wrote before its `replies`-th
   * reply, or ended, or after OUTPUT_WAIT_MS (model code may have closed a stream).
   */
  outputCaughtUp(replies: number): Promise<void> {
    const done = () => this.marks.every((marks) => marks.ended || marks.seen >= replies);
    if (done()) return Promise.resolve();
    return new Promise((resolve) => {
      const finish = () => {
        clearTimeout(timer);
        this.waiters.delete(waiter);
        resolve();
      };
      const waiter = () => {
        if (done()) finish();
      };
      const timer = setTimeout(finish, OUTPUT_WAIT_MS);
      this.waiters.add(waiter);
    });
  }

  private wakeWaiters(): void {
    for (const waiter of [...this.waiters]) waiter();
  }

  private markExited(): void {
    if (this.exited) return;
    this.exited = true;
    try {
      closeSync(this.columnFd);
    } catch {
      // Already closed.
    }
    live.delete(this);
    this.onExit?.();
  }

  kill(): void {
    if (this.exited) return;
    try {
      this.process.kill('SIGKILL');
    } catch {
      // Already gone.
    }
  }

  /** Whether this process keeps the host's event loop alive (not while it waits idle). */
  hold(held: boolean): void {
    const handles = [
      this.process,
      this.process.stdout,
      this.process.stderr,
      this.process.stdio[BEAT_FD],
      this.process.channel,
    ] as Array<{ ref?: () => void; unref?: () => void } | null | undefined>;
    for (const handle of handles) {
      if (held) handle?.ref?.();
      else handle?.unref?.();
    }
  }

  /** The captured stdout and stderr of model code, cut to a readable length. */
  shownOutput(): string {
    const dropped = this.outputDropped + Math.max(0, this.output.length - OUTPUT_SHOWN);
    // Control characters (terminal escapes) are shown as U+FFFD, so printing the output is safe.
    const text = this.output.slice(0, OUTPUT_SHOWN).replace(/[\u0000-\u0008\u000b-\u001f\u007f-\u009f]/g, '\ufffd');
    return dropped > 0 ? `${text}\n… (${dropped} more characters not shown)` : text;
  }
}

const live = new Set<Child>();
const idle: Array<{ child: Child; timer: NodeJS.Timeout }> = [];
let exitHookInstalled = false;
/** Idle children kept at most: IDLE_CHILDREN, or the largest pool asked for (ModelSandbox.keepWarm). */
let idleLimit = IDLE_CHILDREN;

function installExitHook(): void {
  if (exitHookInstalled) return;
  exitHookInstalled = true;
  // No child outlives the host, also when the host exits in the middle of a job.
  process.once('exit', () => {
    for (const child of live) child.kill();
  });
}

function takeIdle(key: string): Child | undefined {
  const index = idle.findIndex((entry) => entry.child.key === key && !entry.child.exited);
  if (index < 0) return undefined;
  const [entry] = idle.splice(index, 1);
  clearTimeout(entry.timer);
  entry.child.hold(true);
  entry.child.output = '';
  entry.child.outputDropped = 0;
  return entry.child;
}

function parkIdle(child: Child): void {
  if (child.exited) return;
  child.onMessage = undefined;
  child.hold(false);
  const timer = setTimeout(() => {
    const index = idle.findIndex((entry) => entry.child === child);
    if (index >= 0) idle.splice(index, 1);
    child.kill();
  }, IDLE_MS);
  timer.unref();
  idle.push({ child, timer });
  child.onExit = () => {
    const index = idle.findIndex((entry) => entry.child === child);
    if (index >= 0) {
      clearTimeout(idle[index].timer);
      idle.splice(index, 1);
    }
  };
  while (idle.length > idleLimit) {
    const oldest = idle.shift()!;
    clearTimeout(oldest.timer);
    oldest.child.kill();
  }
}

/** Ends every idle child (tests and benchmarks that compare cold and warm starts). */
export function endIdleSandboxes(): void {
  for (const entry of idle.splice(0)) {
    clearTimeout(entry.timer);
    entry.child.kill();
  }
}

export class ModelSandbox {
  private readonly child: Child;
  private closed = false;
  private failed = false;
  private pending?: { resolve: (reply: Settled) => void };
  /** The job of the last request, for describing a failure that the child cannot report itself. */
  private job: HostRequest['type'] = 'load';
  private jobBegan = Date.now();
  private exitFailure?: ModelFailure;

  private constructor(
    private readonly bundle: ModelBundle,
    private readonly limits: SandboxLimits,
    private readonly isCancelled: () => boolean,
    private readonly key: string,
    private readonly folder: string,
    private readonly specPath: string,
  ) {
    installExitHook();
    this.child = takeIdle(key) ?? new Child(key, folder, limits.memoryMb);
    this.child.onMessage = (message) => this.received(message);
    this.child.onExit = () => {
      this.closed = true;
      this.exitFailure ??= this.exitDescription();
      this.settle(this.exitFailure);
    };
    if (this.child.exited) this.child.onExit();
  }

  /** Bundles the spec, starts (or reuses) a child and loads the model; the description tells its members. */
  static async start(
    path: string,
    text: string,
    limits: SandboxLimits = DEFAULT_LIMITS,
    isCancelled: () => boolean = () => false,
  ): Promise<Outcome<{ sandbox: ModelSandbox; description: ModelDescription }>> {
    const bundle = await bundleModel(path, text);
    if (!('code' in bundle)) {
      return {
        failure: { kind: 'bundle', phase: 'load', message: bundle.message, location: bundle.location },
        randomness: [],
      };
    }
    const folder = existsSync(dirname(resolve(path))) ? dirname(resolve(path)) : bundle.root;
    const key = `${folder}\n${limits.memoryMb}\n${createHash('sha256').update(bundle.code).digest('hex')}`;
    const sandbox = new ModelSandbox(bundle, limits, isCancelled, key, folder, path);
    const outcome = await sandbox.load();
    if (outcome.failure) {
      const output = sandbox.output();
      await sandbox.close();
      return { failure: outcome.failure, randomness: outcome.randomness, output, notices: sandbox.notices };
    }
    return { value: { sandbox, description: outcome.value! }, randomness: outcome.randomness };
  }

  private async load(): Promise<Outcome<ModelDescription>> {
    const reply = await this.request({
      type: 'load',
      code: this.bundle.code,
      specPath: this.specPath,
      limits: this.limits,
    });
    return this.outcomeOf(reply, (r) => (r.type === 'loaded' ? r.description : undefined));
  }

  /**
   * Another sandbox with the same bundle, in a warm child when one is parked, loaded like this one
   * (--jobs N). Undefined when it could not be started or loaded: the caller then uses fewer
   * children, which changes no figure. What the load reported of unseeded randomness comes along.
   */
  async sibling(): Promise<{ sandbox?: ModelSandbox; randomness: RandomnessUse[] }> {
    const sandbox = new ModelSandbox(this.bundle, this.limits, this.isCancelled, this.key, this.folder, this.specPath);
    const outcome = await sandbox.load();
    if (outcome.failure) {
      await sandbox.close();
      return { randomness: outcome.randomness };
    }
    return { sandbox, randomness: outcome.randomness };
  }

  /** Keeps up to `count` idle children of this bundle warm (a pool of --jobs N children is reused whole). */
  static keepWarm(count: number): void {
    idleLimit = Math.max(idleLimit, count);
  }

  /** What the boundary lacks on this machine (shown to the user as a warning). */
  get notices(): string[] {
    return this.child.notices;
  }

  /** Everything model code printed to stdout and stderr since this sandbox started, cut to a readable length. */
  output(): string {
    return this.child.shownOutput();
  }

  async enumerate(options: Extract<HostRequest, { type: 'enumerate' }>['options']): Promise<Outcome<Enumeration>> {
    const reply = await this.request({ type: 'enumerate', options });
    return this.outcomeOf(reply, (r) => (r.type === 'assembled' && validEnumeration(r.result) ? r.result : undefined));
  }

  async rollouts(options: Extract<HostRequest, { type: 'rollouts' }>['options']): Promise<Outcome<RolloutRun>> {
    const reply = await this.request({ type: 'rollouts', options });
    return this.outcomeOf(reply, (r) => (r.type === 'rolled' && validRun(r.run, options.episodes) ? r.run : undefined));
  }

  async learn(options: Extract<HostRequest, { type: 'learn' }>['options']): Promise<Outcome<LearnRun>> {
    const reply = await this.request({ type: 'learn', options });
    return this.outcomeOf(reply, (r) => (r.type === 'learned' ? r.run : undefined));
  }

  /** Replays the later ranges' logs into the recorder held since the last rollouts, then explores (--jobs N). */
  async record(
    logs: TrajectoryLog[],
    seed: number,
    declaredTerms: string[],
  ): Promise<Outcome<{ counts?: TransitionCounts; countsProblem?: RuntimeProblem }>> {
    const reply = await this.request({ type: 'record', logs, seed, declaredTerms });
    return this.outcomeOf(reply, (r) =>
      r.type === 'recorded' && optionalProblem(r.countsProblem) && typeof r.counts === 'object' && r.counts !== null
        ? r
        : undefined,
    );
  }

  /** The training phase of learning; the child keeps the learner for `decide`. */
  async train(options: LearnJobOptions): Promise<Outcome<{ trained?: TrainedPart; problem?: RuntimeProblem }>> {
    const reply = await this.request({ type: 'train', options });
    return this.outcomeOf(reply, (r) =>
      r.type === 'trained' && optionalProblem(r.problem) && (r.problem !== undefined || validTable(r.trained?.table))
        ? r
        : undefined,
    );
  }

  /** The greedy policy of a learned table on a range of measured episodes. */
  async measure(options: MeasureJobOptions): Promise<Outcome<{ part?: MeasuredPart; problem?: RuntimeProblem }>> {
    const reply = await this.request({ type: 'measure', options });
    return this.outcomeOf(reply, (r) =>
      r.type === 'measured' &&
      optionalProblem(r.problem) &&
      (r.problem !== undefined || validPart(r.part, options.count))
        ? r
        : undefined,
    );
  }

  /** The decision on the start actions of the learner this child trained last. */
  async decide(
    measuredEpisodes: number,
  ): Promise<Outcome<{ decision: Pick<LearningSummary, 'decision' | 'noDecision'>; problem?: RuntimeProblem }>> {
    const reply = await this.request({ type: 'decide', measuredEpisodes });
    return this.outcomeOf(reply, (r) =>
      r.type === 'decided' && optionalProblem(r.problem) && typeof r.decision === 'object' && r.decision !== null
        ? r
        : undefined,
    );
  }

  /** Ends the sandbox: a child that did its jobs well waits for the next load of the same bundle, any other is killed. */
  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    this.exitFailure = { kind: 'cancelled', phase: 'load', message: 'the sandbox was closed' };
    if (this.failed || this.pending) this.child.kill();
    else parkIdle(this.child);
    await Promise.resolve();
  }

  /** Maps a runtime problem's stack (or else its phase) to a source location. */
  locate(problem: RuntimeProblem): ModelFailure {
    return {
      ...problem,
      message: clip(problem.message),
      location: locateStack(this.bundle, problem.stack, MODEL_SCRIPT_NAME),
    };
  }

  mapRandomness(calls: RandomnessCall[]): RandomnessUse[] {
    return calls.map((call) => ({
      api: clip(call.api, 80),
      count: call.count,
      location: locateStack(this.bundle, call.stack, MODEL_SCRIPT_NAME),
    }));
  }

  private outcomeOf<T>(reply: Settled, pick: (reply: WorkerReply | Assembled) => T | undefined): Outcome<T> {
    if (!('type' in reply)) {
      this.failed = true;
      return { failure: reply, randomness: [] };
    }
    const calls = 'randomness' in reply ? reply.randomness : undefined;
    const randomness = Array.isArray(calls) ? this.mapRandomness(calls.filter(validRandomness)) : [];
    if (reply.type === 'problem') {
      if (!validProblem(reply.problem)) return this.malformedReply();
      if (reply.problem.kind === 'timeout' || reply.problem.kind === 'memory') this.failed = true;
      return { failure: this.locate(reply.problem), randomness };
    }
    const value = pick(reply);
    if (value === undefined) return this.malformedReply();
    return { value, randomness };
  }

  private malformedReply(): Outcome<never> {
    this.failed = true;
    return {
      failure: {
        kind: 'crashed',
        phase: this.jobPhase(),
        message: "sent a reply that is not what the sandbox sends (model code wrote to the sandbox's channel?)",
      },
      randomness: [],
    };
  }

  private request(message: HostRequest): Promise<Settled> {
    if (this.closed || this.child.exited) return Promise.resolve(this.exitFailure ?? this.exitDescription());
    return new Promise((resolve) => {
      this.pending = { resolve };
      this.job = message.type;
      this.jobBegan = Date.now();
      this.child.lastBeat = this.jobBegan;
      // Whatever the file holds now (model code may have written to it) must not pass for this job's columns.
      if (message.type === 'enumerate') emptyColumnFile(this.child.columnFd);
      try {
        this.child.process.send(message, (error) => {
          if (error)
            this.stop({
              kind: 'crashed',
              phase: this.jobPhase(),
              message: `could not be reached: ${clip(error.message)}`,
            });
        });
      } catch (error) {
        this.stop({
          kind: 'crashed',
          phase: this.jobPhase(),
          message: `could not be reached: ${error instanceof Error ? clip(error.message) : 'unknown error'}`,
        });
        return;
      }
      this.watch();
    });
  }

  private received(message: unknown): void {
    // A fault can come between jobs (a rejection after loading); the next request answers with it.
    if (!this.pending && (message as { type?: unknown } | null)?.type !== 'fault') return;
    if (typeof message !== 'object' || message === null || typeof (message as { type?: unknown }).type !== 'string') {
      this.settle({
        kind: 'crashed',
        phase: this.jobPhase(),
        message: "sent a reply that is not what the sandbox sends (model code wrote to the sandbox's channel?)",
      });
      return;
    }
    const reply = message as WorkerReply;
    if (reply.type === 'fault') {
      const failure: ModelFailure = {
        kind: 'crashed',
        phase: this.jobPhase(),
        message: `failed outside a model call: ${clip(String(reply.message))}`,
        location:
          typeof reply.stack === 'string' ? locateStack(this.bundle, reply.stack, MODEL_SCRIPT_NAME) : undefined,
      };
      this.exitFailure = failure;
      this.failed = true;
      this.settle(failure);
      return;
    }
    // The output printed during the job travels on other pipes; wait for it (see OUTPUT_MARK).
    // Every reply but a fault follows a mark, so each one counts, or a warm child's next job
    // would take an earlier job's mark for its own and report before its output arrived.
    const pending = this.pending;
    void this.child.outputCaughtUp(++this.child.replies).then(() => {
      if (this.pending !== pending) return;
      this.settle(reply.type === 'enumerated' ? this.withColumns(reply) : reply);
    });
  }

  private settle(reply: Settled): void {
    const pending = this.pending;
    this.pending = undefined;
    pending?.resolve(reply);
  }

  /** The enumeration of a head and the columns the child wrote to the column file, or a malformed reply. */
  private withColumns(reply: Extract<WorkerReply, { type: 'enumerated' }>): Assembled | ModelFailure {
    const result =
      this.job === 'enumerate'
        ? readColumns(reply.head, reply.keys, this.child.columnFd)
        : 'no enumeration was asked for';
    if (typeof result === 'string')
      return {
        kind: 'crashed',
        phase: this.jobPhase(),
        message: `sent an enumeration that does not fit together: ${result}`,
      };
    return { type: 'assembled', result, randomness: reply.randomness };
  }

  /** The phase a failure seen only by the host is blamed on: the whole job, since no single call is known. */
  private jobPhase(): ModelFailure['phase'] {
    return this.job === 'load' ? 'load' : this.job === 'enumerate' ? 'enumeration' : 'rollouts';
  }

  /**
   * The host's own limits, checked on a timer of this process: the job's wall clock, and the
   * child's liveness beats (one per 100 ms of model calls). The child stops an honest model first,
   * with its call and line; these limits leave it a margin and then kill the child whatever it does.
   * Beats the model forges can keep it alive only until the job's limit.
   */
  private watch(): void {
    const { callTimeoutMs, jobTimeoutMs } = this.limits;
    const margin = Math.max(1000, callTimeoutMs / 2);
    // Loading includes starting Node, which can take seconds on a loaded machine.
    const callLimit = this.job === 'load' ? callTimeoutMs + margin + 5000 : callTimeoutMs + margin;
    const interval = Math.max(10, Math.min(250, callTimeoutMs / 4));
    const timer = setInterval(() => {
      if (!this.pending) {
        clearInterval(timer);
        return;
      }
      const at = Date.now();
      if (this.isCancelled()) {
        clearInterval(timer);
        this.stop({ kind: 'cancelled', phase: this.jobPhase(), message: 'the analysis was cancelled' });
        return;
      }
      if (at - this.jobBegan > jobTimeoutMs + margin) {
        clearInterval(timer);
        const seconds = Math.round(jobTimeoutMs / 1000);
        this.stop({
          kind: 'timeout',
          phase: this.jobPhase(),
          message: `was still running when the job's time limit of ${seconds} s ran out (the model is too slow or too large, or ignored the sandbox's stops)`,
        });
        return;
      }
      if (at - Math.max(this.child.lastBeat, this.jobBegan) > callLimit) {
        clearInterval(timer);
        this.stop({
          kind: 'timeout',
          phase: this.jobPhase(),
          message: `made no progress for ${callLimit} ms: a model call did not return within ${callTimeoutMs} ms (an endless loop?)`,
        });
      }
    }, interval);
  }

  private stop(failure: ModelFailure): void {
    this.exitFailure = failure;
    this.failed = true;
    this.closed = true;
    this.settle(failure);
    this.child.kill();
  }

  /** How the child ended, in words: out of memory, aborted, killed or stopped. */
  private exitDescription(): ModelFailure {
    const phase = this.jobPhase();
    const output = this.child.output;
    if (/heap out of memory|Fatal process out of memory|Reached heap limit|allocation failed/i.test(output)) {
      return { kind: 'memory', phase, message: `ran out of memory (the limit is ${this.limits.memoryMb} MB of heap)` };
    }
    const { exitCode, exitSignal } = this.child;
    if (exitCode === 134 || exitSignal === 'SIGABRT')
      return { kind: 'crashed', phase, message: 'made the sandbox process abort (exit code 134)' };
    const how = exitSignal
      ? `was killed by ${exitSignal}`
      : exitCode === null
        ? 'could not be started'
        : `stopped with exit code ${exitCode}`;
    return { kind: 'crashed', phase, message: `ended the sandbox process: it ${how}` };
  }
}

/** An enumeration put together from its head and the column file (enumeration-columns.ts). */
interface Assembled {
  type: 'assembled';
  result: Enumeration;
  randomness: RandomnessCall[];
}

type Settled = WorkerReply | Assembled | ModelFailure;

// ---- Replies are model-controlled input: check their shape before anything reads them ----

function validRandomness(call: unknown): call is RandomnessCall {
  const c = call as RandomnessCall;
  return (
    typeof c === 'object' &&
    c !== null &&
    typeof c.api === 'string' &&
    typeof c.count === 'number' &&
    typeof c.stack === 'string'
  );
}

function validProblem(problem: unknown): problem is RuntimeProblem {
  const p = problem as RuntimeProblem;
  return (
    typeof p === 'object' &&
    p !== null &&
    typeof p.kind === 'string' &&
    typeof p.phase === 'string' &&
    typeof p.message === 'string'
  );
}

function indices(array: unknown, limit: number): boolean {
  if (!(array instanceof Int32Array)) return false;
  for (let i = 0; i < array.length; i++) if (array[i] < 0 || array[i] > limit) return false;
  return true;
}

/** Row starts of a CSR array: from 0, never decreasing, ending at `end`. */
function rowStarts(array: unknown, end: number): boolean {
  if (!(array instanceof Int32Array) || array.length === 0 || array[0] !== 0 || array[array.length - 1] !== end)
    return false;
  for (let i = 1; i < array.length; i++) if (array[i] < array[i - 1]) return false;
  return true;
}

export function validEnumeration(result: Enumeration): boolean {
  if (typeof result !== 'object' || result === null) return false;
  const states = Array.isArray(result.stateKeys) ? result.stateKeys.length : -1;
  if (states < 0 || !result.stateKeys.every((key) => typeof key === 'string')) return false;
  if (!Array.isArray(result.actionNames) || !result.actionNames.every((name) => typeof name === 'string')) return false;
  if (!Array.isArray(result.termNames) || !Array.isArray(result.termRewards) || !Array.isArray(result.nondeterminism))
    return false;
  if (
    !(result.terminal instanceof Uint8Array) ||
    !(result.outcomeProb instanceof Float64Array) ||
    !(result.outcomeReward instanceof Float64Array)
  )
    return false;
  if (!(result.startProbs instanceof Float64Array)) return false;
  const choices = result.choiceAction instanceof Int32Array ? result.choiceAction.length : -1;
  const outcomes = result.outcomeTarget instanceof Int32Array ? result.outcomeTarget.length : -1;
  if (choices < 0 || outcomes < 0) return false;
  if (result.outcomeProb.length !== outcomes || result.outcomeReward.length !== outcomes) return false;
  if (!result.termRewards.every((column) => column instanceof Float64Array && column.length === outcomes)) return false;
  if (!rowStarts(result.choiceStart, choices) || !rowStarts(result.outcomeStart, outcomes)) return false;
  if (!(result.startStates instanceof Int32Array) || result.startStates.length !== result.startProbs.length)
    return false;
  if (
    !indices(result.choiceAction, result.actionNames.length - 1) ||
    !indices(result.outcomeTarget, states - 1) ||
    !indices(result.startStates, states - 1)
  )
    return false;
  if (result.problem !== undefined && !validProblem(result.problem)) return false;
  // A capped or failed enumeration stops part-way; a complete one has a choice range per state.
  return (
    result.capped ||
    result.problem !== undefined ||
    (result.choiceStart.length === states + 1 &&
      result.outcomeStart.length === choices + 1 &&
      result.terminal.length === states)
  );
}

function validRun(run: RolloutRun, episodes: number): boolean {
  if (typeof run !== 'object' || run === null || typeof run.records !== 'object' || run.records === null) return false;
  const { returns, lengths, ends } = run.records;
  if (!(returns instanceof Float64Array) || !(lengths instanceof Int32Array) || !(ends instanceof Uint8Array))
    return false;
  if (returns.length > episodes || lengths.length !== returns.length || ends.length !== returns.length) return false;
  if (!Array.isArray(run.fingerprints) || !run.fingerprints.every((f) => typeof f === 'string')) return false;
  return (
    (run.problem === undefined || validProblem(run.problem)) &&
    (run.firstNonFinite === undefined || validProblem(run.firstNonFinite))
  );
}

function optionalProblem(problem: unknown): boolean {
  return problem === undefined || validProblem(problem);
}

/** A learned table whose arrays fit together: key indices in range, slot starts ascending to the slot count. */
function validTable(table: LearnedTable | undefined): boolean {
  if (typeof table !== 'object' || table === null || !Array.isArray(table.keys)) return false;
  const { stateKey, stateStep, slotStart, q, visits } = table;
  if (
    !(stateStep instanceof Int32Array) ||
    !(q instanceof Float64Array) ||
    !(visits instanceof Int32Array) ||
    q.length !== visits.length
  )
    return false;
  if (!indices(stateKey, table.keys.length - 1) || stateStep.length !== stateKey.length) return false;
  return rowStarts(slotStart, q.length) && slotStart.length === stateKey.length + 1;
}

function validPart(part: MeasuredPart | undefined, episodes: number): boolean {
  if (typeof part !== 'object' || part === null || typeof part.records !== 'object' || part.records === null)
    return false;
  const { returns, lengths, ends } = part.records;
  if (!(returns instanceof Float64Array) || !(lengths instanceof Int32Array) || !(ends instanceof Uint8Array))
    return false;
  if (returns.length !== episodes || lengths.length !== episodes || ends.length !== episodes) return false;
  return Array.isArray(part.newKeys) && Array.isArray(part.newStates) && typeof part.unlearnedSteps === 'number';
}
