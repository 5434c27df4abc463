/**
 * Per-document analysis scheduling. Each request (an open, an edit, a settings change) gets a
 * ticket; a newer ticket cancels the older one's work (queued or running), so only the newest version
 * is ever worked on. Waiting callers (pull diagnostics) get the newest ticket's result. The last
 * completed snapshot stays available for hovers while newer work runs.
 */
import type { WarmStart } from '../analysis/warm-start';
import type { AnalysisJob, AnalysisSnapshot } from './protocol';
import { JobCancelledError, type JobHandle, type WorkerPool } from './pool';

export type JobInput = Omit<AnalysisJob, 'jobId' | 'kind'>;

export interface SchedulerHooks {
  /** Builds the job for the document's current state; undefined when it should not be analysed. */
  prepare(uri: string): Promise<JobInput | undefined>;
  /** A run started; the returned function is called when it ends (however it ends). */
  started(uri: string, job: JobInput): () => void;
  /** A snapshot completed. `current` is false when the document changed meanwhile (results then only serve hovers). */
  completed(snapshot: AnalysisSnapshot, current: boolean): void;
  /** A run failed for a reason other than cancellation; returns what to report for it (a snapshot saying so). */
  failed(uri: string, job: JobInput | undefined, error: Error): AnalysisSnapshot | undefined;
}

interface DocumentState {
  ticket: number;
  timer?: NodeJS.Timeout;
  running?: { ticket: number; handle: JobHandle; end: () => void };
  /** The newest completed analysis, for hovers (possibly of an older version). */
  latest?: AnalysisSnapshot;
  latestTicket: number;
  /** What answers the ticket `settledTicket` (a failure report, or undefined when not analysed). */
  settled?: AnalysisSnapshot;
  settledTicket: number;
  waiters: Array<(snapshot: AnalysisSnapshot | undefined) => void>;
  lastDurationMs: number;
  /** When the last analysis was asked for (performance.now()). */
  lastRequestAt: number;
  /** The solution of the newest completed analysis (of ticket solutionTicket), where the next analysis starts. */
  solution?: WarmStart;
  solutionTicket: number;
}

export interface SchedulerOptions {
  /** Bounds of the pause before an edit is analysed (scaled by how long the last analysis took). */
  minDelayMs: number;
  maxDelayMs: number;
}

export class AnalysisScheduler {
  private readonly documents = new Map<string, DocumentState>();

  constructor(
    private readonly pool: WorkerPool,
    private readonly hooks: SchedulerHooks,
    private readonly options: SchedulerOptions = { minDelayMs: 10, maxDelayMs: 150 },
  ) {}

  /**
   * Asks for an analysis of the document's current state. An edit that comes alone (nothing running,
   * no edit just before) is analysed at once; an edit inside a burst of keystrokes cancels the work
   * in progress and waits for a pause, so that the burst is analysed once. `immediate` always starts
   * at once (opening a document, a settings change).
   */
  schedule(uri: string, immediate = false): void {
    const state = this.state(uri);
    state.ticket++;
    const now = performance.now();
    // A quarter of the last analysis' time: long enough to take a burst as one edit, short next to the analysis itself.
    const pause = Math.min(this.options.maxDelayMs, Math.max(this.options.minDelayMs, state.lastDurationMs / 4));
    const inBurst = state.running !== undefined || state.timer !== undefined || now - state.lastRequestAt < pause;
    state.lastRequestAt = now;
    clearTimeout(state.timer);
    this.cancelRunning(state);
    const ticket = state.ticket;
    state.timer = setTimeout(
      () => {
        state.timer = undefined;
        void this.start(uri, ticket);
      },
      immediate || !inBurst ? 0 : pause,
    );
  }

  /** The newest completed snapshot, possibly of an older version. */
  latest(uri: string): AnalysisSnapshot | undefined {
    return this.documents.get(uri)?.latest;
  }

  /** True when work for the document is pending or running. */
  busy(uri: string): boolean {
    const state = this.documents.get(uri);
    return !!state && state.settledTicket !== state.ticket;
  }

  /** Resolves with the snapshot of the newest request (waiting for it if needed); undefined when the document is forgotten. */
  current(uri: string): Promise<AnalysisSnapshot | undefined> {
    const state = this.documents.get(uri);
    if (!state) return Promise.resolve(undefined);
    if (state.settledTicket === state.ticket) return Promise.resolve(state.settled);
    return new Promise((resolve) => state.waiters.push(resolve));
  }

  /** Stops all work for a document and drops what is known about it. */
  forget(uri: string): void {
    const state = this.documents.get(uri);
    if (!state) return;
    clearTimeout(state.timer);
    state.timer = undefined;
    this.cancelRunning(state);
    this.documents.delete(uri);
    for (const waiter of state.waiters.splice(0)) waiter(undefined);
  }

  uris(): string[] {
    return [...this.documents.keys()];
  }

  dispose(): void {
    for (const uri of this.uris()) this.forget(uri);
  }

  private state(uri: string): DocumentState {
    let state = this.documents.get(uri);
    if (!state) {
      state = {
        ticket: 0,
        latestTicket: -1,
        settledTicket: -1,
        waiters: [],
        lastDurationMs: 0,
        lastRequestAt: -Infinity,
        solutionTicket: -1,
      };
      this.documents.set(uri, state);
    }
    return state;
  }

  private cancelRunning(state: DocumentState): void {
    const running = state.running;
    if (!running) return;
    state.running = undefined;
    running.handle.cancel();
    running.end();
  }

  private async start(uri: string, ticket: number): Promise<void> {
    const state = this.documents.get(uri);
    if (!state || state.ticket !== ticket) return;
    let job: JobInput | undefined;
    try {
      job = await this.hooks.prepare(uri);
    } catch (error) {
      if (this.documents.get(uri) === state && state.ticket === ticket)
        this.settle(state, ticket, this.hooks.failed(uri, undefined, asError(error)));
      return;
    }
    if (this.documents.get(uri) !== state || state.ticket !== ticket) return;
    if (!job) {
      // Not analysed (disabled): nothing to show, not even an older analysis.
      state.latest = undefined;
      state.latestTicket = ticket;
      this.settle(state, ticket, undefined);
      return;
    }
    // A small edit then costs a verification of the last solution rather than a solve.
    const handle = this.pool.run(state.solution ? { ...job, startFrom: state.solution } : job);
    const end = this.hooks.started(uri, job);
    state.running = { ticket, handle, end };
    try {
      const snapshot = await handle.promise;
      if (state.running?.handle === handle) {
        state.running = undefined;
        end();
      }
      if (this.documents.get(uri) !== state) return;
      state.lastDurationMs = snapshot.durationMs;
      // The snapshot serves hovers for a while; the solution is needed only here.
      const solution = snapshot.solution;
      snapshot.solution = undefined;
      if (solution && ticket > state.solutionTicket) {
        state.solution = solution;
        state.solutionTicket = ticket;
      }
      const current = state.ticket === ticket;
      // An older result still serves hovers if nothing newer has completed.
      if (current || ticket > state.latestTicket) {
        state.latest = snapshot;
        state.latestTicket = ticket;
      }
      this.hooks.completed(snapshot, current);
      if (current) this.settle(state, ticket, snapshot);
    } catch (error) {
      if (state.running?.handle === handle) {
        state.running = undefined;
        end();
      }
      if (error instanceof JobCancelledError) return;
      if (this.documents.get(uri) !== state) return;
      const report = this.hooks.failed(uri, job, asError(error));
      if (state.ticket === ticket) this.settle(state, ticket, report);
    }
  }

  private settle(state: DocumentState, ticket: number, snapshot: AnalysisSnapshot | undefined): void {
    state.settled = snapshot;
    state.settledTicket = ticket;
    for (const waiter of state.waiters.splice(0)) waiter(snapshot);
  }
}

function asError(error: unknown): Error {
  return error instanceof Error ? error : new Error(String(error));
}
