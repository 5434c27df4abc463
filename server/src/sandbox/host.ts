/**
 * The host side of the sandbox: starts a worker thread with memory limits for one model, sends it
 * whole jobs, and turns everything that can go wrong in model code (a throw, a malformed value, an
 * endless loop, running out of memory, process.exit) into a ModelFailure with a source location.
 * The host process is never at risk: the worker is terminated, never waited on without a limit.
 */
import { buildSync } from 'esbuild';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { isMainThread, Worker } from 'node:worker_threads';
import type { LearnRun } from './learn';
import { bundleModel, locateStack, originalPosition, type ModelBundle, type SourceLocation } from './bundle';
import { MODEL_SCRIPT_NAME, STATE_TEXT_LENGTH, type HostRequest, type ModelDescription, type RandomnessCall, type WorkerReply } from './protocol';
import { PHASE_CODES, type Enumeration, type ModelFunction, type RolloutRun, type RuntimeProblem } from './runtime';

export interface SandboxLimits {
  /** A single model call that runs longer than this (wall clock) is stopped as a hang. */
  callTimeoutMs: number;
  /** Heap limit of the worker (old generation), in MB. */
  memoryMb: number;
  /** Wall-clock limit of one whole job (an enumeration, a batch of rollouts), however busy the model is. */
  jobTimeoutMs: number;
}

export const DEFAULT_LIMITS: SandboxLimits = { callTimeoutMs: 2000, memoryMb: 512, jobTimeoutMs: 120_000 };

/** Anything that went wrong in model code, located in the user's source where possible. */
export interface ModelFailure {
  kind: RuntimeProblem['kind'] | 'timeout' | 'memory' | 'crashed' | 'bundle' | 'cancelled';
  phase: ModelFunction;
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
}

let cachedWorkerCode: string | undefined;

/**
 * The worker's script: the bundled `sandbox-worker.js` next to the running bundle (dist/), or,
 * when running from source (tests), `worker.ts` bundled on the fly.
 */
function workerScript(): { file: string } | { code: string } {
  const built = join(__dirname, 'sandbox-worker.js');
  if (existsSync(built)) return { file: built };
  if (cachedWorkerCode === undefined) {
    const output = buildSync({
      entryPoints: [join(__dirname, 'worker.ts')],
      bundle: true,
      platform: 'node',
      format: 'cjs',
      target: 'node20',
      write: false,
      logLevel: 'silent',
    });
    cachedWorkerCode = output.outputFiles[0].text;
  }
  return { code: cachedWorkerCode };
}

export class ModelSandbox {
  private readonly progress: Int32Array;
  private readonly stateText: Uint16Array;
  private readonly worker: Worker;
  private closed = false;
  private pending?: { resolve: (reply: WorkerReply | ModelFailure) => void };
  /** The job of the last request, for describing a failure that the worker cannot report itself. */
  private job: HostRequest['type'] = 'load';
  private exitFailure?: ModelFailure;

  private constructor(
    private readonly bundle: ModelBundle,
    private readonly limits: SandboxLimits,
    private readonly isCancelled: () => boolean,
  ) {
    const progressBuffer = new SharedArrayBuffer(5 * 4);
    const textBuffer = new SharedArrayBuffer(STATE_TEXT_LENGTH * 2);
    this.progress = new Int32Array(progressBuffer);
    this.stateText = new Uint16Array(textBuffer);
    const script = workerScript();
    const resourceLimits = { maxOldGenerationSizeMb: limits.memoryMb, maxYoungGenerationSizeMb: Math.min(64, Math.max(8, limits.memoryMb / 8)), stackSizeMb: 4 };
    const workerData = { progress: progressBuffer, stateText: textBuffer };
    this.worker =
      'file' in script
        ? new Worker(script.file, { workerData, resourceLimits, stdout: true, stderr: true })
        : new Worker(script.code, { eval: true, workerData, resourceLimits, stdout: true, stderr: true });
    // Model code may print; its output must not mix with the CLI's or the language server's stdout.
    this.worker.stdout.resume();
    this.worker.stderr.resume();
    this.worker.on('error', (error: Error & { code?: string }) => {
      const failure: ModelFailure =
        error.code === 'ERR_WORKER_OUT_OF_MEMORY'
          ? this.failureAtProgress('memory', `ran out of memory (the limit is ${this.limits.memoryMb} MB of heap)`)
          : this.failureAtProgress('crashed', `failed outside a model call: ${error.name}: ${error.message}`, error.stack);
      this.settle(failure);
    });
    this.worker.on('exit', (code) => {
      this.closed = true;
      this.exitFailure ??= this.failureAtProgress('crashed', `the model's thread stopped (exit code ${code})`);
      this.settle(this.exitFailure);
    });
  }

  /** Bundles the spec, starts a worker and loads the model; the description tells its members. */
  static async start(
    path: string,
    text: string,
    limits: SandboxLimits = DEFAULT_LIMITS,
    isCancelled: () => boolean = () => false,
  ): Promise<Outcome<{ sandbox: ModelSandbox; description: ModelDescription }>> {
    const bundle = await bundleModel(path, text);
    if (!('code' in bundle)) {
      return { failure: { kind: 'bundle', phase: 'load', message: bundle.message, location: bundle.location }, randomness: [] };
    }
    const sandbox = new ModelSandbox(bundle, limits, isCancelled);
    const reply = await sandbox.request({ type: 'load', code: bundle.code, specPath: path });
    const outcome = sandbox.outcomeOf(reply, (r) => (r.type === 'loaded' ? r.description : undefined));
    if (outcome.failure) {
      await sandbox.close();
      return { failure: outcome.failure, randomness: outcome.randomness };
    }
    return { value: { sandbox, description: outcome.value! }, randomness: outcome.randomness };
  }

  async enumerate(options: Extract<HostRequest, { type: 'enumerate' }>['options']): Promise<Outcome<Enumeration>> {
    const reply = await this.request({ type: 'enumerate', options });
    return this.outcomeOf(reply, (r) => (r.type === 'enumerated' ? r.result : undefined));
  }

  async rollouts(options: Extract<HostRequest, { type: 'rollouts' }>['options']): Promise<Outcome<RolloutRun>> {
    const reply = await this.request({ type: 'rollouts', options });
    return this.outcomeOf(reply, (r) => (r.type === 'rolled' ? r.run : undefined));
  }

  async learn(options: Extract<HostRequest, { type: 'learn' }>['options']): Promise<Outcome<LearnRun>> {
    const reply = await this.request({ type: 'learn', options });
    return this.outcomeOf(reply, (r) => (r.type === 'learned' ? r.run : undefined));
  }

  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    this.exitFailure = { kind: 'cancelled', phase: 'load', message: 'the sandbox was closed' };
    await this.worker.terminate();
  }

  /** Maps a runtime problem's stack (or else its phase) to a source location. */
  locate(problem: RuntimeProblem): ModelFailure {
    return { ...problem, location: locateStack(this.bundle, problem.stack, MODEL_SCRIPT_NAME) };
  }

  mapRandomness(calls: RandomnessCall[]): RandomnessUse[] {
    return calls.map((call) => ({ api: call.api, count: call.count, location: locateStack(this.bundle, call.stack, MODEL_SCRIPT_NAME) }));
  }

  private outcomeOf<T>(reply: WorkerReply | ModelFailure, pick: (reply: WorkerReply) => T | undefined): Outcome<T> {
    if (!('type' in reply)) return { failure: reply, randomness: [] };
    const randomness = this.mapRandomness(reply.randomness);
    if (reply.type === 'problem') return { failure: this.locate(reply.problem), randomness };
    return { value: pick(reply), randomness };
  }

  private request(message: HostRequest): Promise<WorkerReply | ModelFailure> {
    if (this.closed) return Promise.resolve(this.exitFailure ?? { kind: 'crashed', phase: 'load', message: 'the sandbox is closed' });
    return new Promise((resolve) => {
      this.pending = { resolve };
      this.job = message.type;
      const onMessage = (reply: WorkerReply) => this.settle(reply);
      this.worker.once('message', onMessage);
      this.worker.postMessage(message);
      this.watch();
    });
  }

  private settle(reply: WorkerReply | ModelFailure): void {
    const pending = this.pending;
    this.pending = undefined;
    pending?.resolve(reply);
  }

  /**
   * Watches the call counter the worker bumps before every model call; when it stands still for
   * longer than the call timeout, the running call hangs: find where, then stop the worker.
   */
  private watch(): void {
    let lastCalls = this.progress[0];
    let lastChange = Date.now();
    const began = lastChange;
    const interval = Math.max(10, Math.min(250, this.limits.callTimeoutMs / 4));
    const timer = setInterval(() => {
      if (!this.pending) {
        clearInterval(timer);
        return;
      }
      if (this.isCancelled()) {
        clearInterval(timer);
        this.exitFailure = { kind: 'cancelled', phase: PHASE_CODES[this.progress[1]] ?? 'load', message: 'the analysis was cancelled' };
        void this.close();
        return;
      }
      if (Date.now() - began > this.limits.jobTimeoutMs) {
        clearInterval(timer);
        const seconds = Math.round(this.limits.jobTimeoutMs / 1000);
        void this.stop(this.failureAtProgress('timeout', `was still running when the job's time limit of ${seconds} s ran out (the model is too slow or too large)`));
        return;
      }
      const calls = this.progress[0];
      if (calls !== lastCalls) {
        lastCalls = calls;
        lastChange = Date.now();
        return;
      }
      if (Date.now() - lastChange < this.limits.callTimeoutMs) return;
      clearInterval(timer);
      void this.stopHung();
    }, interval);
  }

  private stopHung(): Promise<void> {
    return this.stop(this.failureAtProgress('timeout', `did not return within ${this.limits.callTimeoutMs} ms (an endless loop?)`));
  }

  /** Locates what the worker is running (by pausing it), then terminates it and settles the request. */
  private async stop(failure: ModelFailure): Promise<void> {
    const paused = await pauseWorker(this.worker.threadId, 1000).catch(() => undefined);
    if (paused) {
      const mapped = originalPosition(this.bundle, paused.line, paused.column);
      if (mapped) failure.location = mapped;
    }
    this.exitFailure = failure;
    this.closed = true;
    this.settle(failure);
    await this.worker.terminate();
  }

  /** A failure described by what the worker last wrote to the shared progress record. */
  private failureAtProgress(kind: ModelFailure['kind'], message: string, stack?: string): ModelFailure {
    const phase = PHASE_CODES[this.progress[1]] ?? 'load';
    const failure: ModelFailure = { kind, phase, message, location: stack ? locateStack(this.bundle, stack, MODEL_SCRIPT_NAME) : undefined };
    if (this.job === 'rollouts' || this.job === 'learn') {
      failure.episode = this.progress[2];
      failure.step = this.progress[3];
    } else if (this.job === 'enumerate' && this.progress[4] > 0) {
      failure.state = String.fromCharCode(...this.stateText.subarray(0, this.progress[4]));
    }
    return failure;
  }
}

/**
 * Pauses a worker thread through the inspector protocol (NodeWorker domain, then Debugger.pause in
 * the worker's session) and returns the 0-based generated position of the innermost frame in model
 * code. This is how an endless loop is located without the loop's cooperation. The worker is always
 * resumed and detached afterwards: a worker left paused in the debugger ignores terminate(), and Node
 * waits for it at process exit for ever.
 */
async function pauseWorker(threadId: number, timeoutMs: number): Promise<{ line: number; column: number } | undefined> {
  let inspector: typeof import('node:inspector');
  try {
    inspector = await import('node:inspector');
  } catch {
    return undefined;
  }
  const session = new inspector.Session();
  // Inside a worker (the language server analyses off its main thread) only the main thread's
  // inspector reports nested workers.
  if (isMainThread) session.connect();
  else session.connectToMainThread();
  let sessionId: string | undefined;
  let id = 0;
  const send = (method: string) =>
    session.post('NodeWorker.sendMessageToWorker', { sessionId: sessionId!, message: JSON.stringify({ id: ++id, method, params: {} }) });
  try {
    return await new Promise<{ line: number; column: number } | undefined>((resolve) => {
      const timer = setTimeout(() => resolve(undefined), timeoutMs);
      const scripts = new Map<string, string>();
      session.on('NodeWorker.attachedToWorker', (message: { params: { sessionId: string; workerInfo: { title: string } } }) => {
        // The inspector numbers workers on its own; the title carries the thread id.
        if (message.params.workerInfo.title !== `[worker ${threadId}]` || sessionId) return;
        sessionId = message.params.sessionId;
        send('Debugger.enable');
        send('Debugger.pause');
      });
      session.on('NodeWorker.receivedMessageFromWorker', (message: { params: { sessionId: string; message: string } }) => {
        if (message.params.sessionId !== sessionId) return;
        const event = JSON.parse(message.params.message) as { method?: string; params?: Record<string, unknown> };
        if (event.method === 'Debugger.scriptParsed') {
          scripts.set(String(event.params!.scriptId), String(event.params!.url));
        } else if (event.method === 'Debugger.paused') {
          const frames = event.params!.callFrames as Array<{ location: { scriptId: string; lineNumber: number; columnNumber: number } }>;
          const frame = frames.find((f) => scripts.get(f.location.scriptId) === MODEL_SCRIPT_NAME);
          clearTimeout(timer);
          resolve(frame ? { line: frame.location.lineNumber, column: frame.location.columnNumber } : undefined);
        }
      });
      session.post('NodeWorker.enable', { waitForDebuggerOnStart: false });
    });
  } finally {
    // Disconnecting this session alone leaves the worker's session attached and the worker paused
    // (also when the pause lands after the timeout), so resume it and detach explicitly.
    if (sessionId) {
      send('Debugger.resume');
      session.post('NodeWorker.detach', { sessionId });
    }
    session.post('NodeWorker.disable');
    session.disconnect();
  }
}
