/**
 * A small pool of analysis workers. Jobs wait in a queue for a free worker; a cancelled job that is
 * running is asked to stop through a shared cell, and its worker is terminated (and replaced on
 * demand) if it has not stopped within a short grace period, so a stale analysis of a huge spec never
 * holds a core while the user types.
 */
import { Worker } from 'node:worker_threads';
import { REMEMBERED_DOCUMENTS, type AnalysisJob, type AnalysisSnapshot, type WorkerReply } from './protocol';

export class JobCancelledError extends Error {
  constructor() {
    super('analysis cancelled');
    this.name = 'JobCancelledError';
  }
}

export interface PoolOptions {
  /** Path of the bundled worker script. */
  script: string;
  size: number;
  /** How long a cancelled job may keep running before its worker is terminated. */
  cancelGraceMs: number;
  log: (message: string) => void;
}

export interface JobHandle {
  promise: Promise<AnalysisSnapshot>;
  cancel(): void;
}

interface PooledWorker {
  worker: Worker;
  /** [0]: the id of the job to cancel; [1]: jobs posted (lsp/worker.ts). */
  sharedCells: Int32Array;
  job?: PendingJob;
  /** Set once the worker is being terminated; it takes no further jobs. */
  retired: boolean;
  /** The documents of its last jobs, most recent last (as many as the worker remembers reads of). */
  recentUris: string[];
}

interface PendingJob {
  job: AnalysisJob;
  resolve(snapshot: AnalysisSnapshot): void;
  reject(error: Error): void;
  cancelled: boolean;
  graceTimer?: NodeJS.Timeout;
}

export class WorkerPool {
  private readonly workers: PooledWorker[] = [];
  private readonly queue: PendingJob[] = [];
  private nextJobId = 1;
  private disposed = false;

  constructor(private readonly options: PoolOptions) {}

  /** Starts one worker ahead of time so the first analysis does not pay for the start-up. */
  warmUp(): void {
    if (this.workers.length === 0) this.spawn();
  }

  run(job: Omit<AnalysisJob, 'jobId' | 'kind'>): JobHandle {
    let pending!: PendingJob;
    const promise = new Promise<AnalysisSnapshot>((resolve, reject) => {
      pending = { job: { ...job, kind: 'analyze', jobId: this.nextJobId++ }, resolve, reject, cancelled: false };
    });
    if (this.disposed) pending.reject(new Error('the analysis pool is shut down'));
    else {
      this.queue.push(pending);
      this.pump();
    }
    return { promise, cancel: () => this.cancel(pending) };
  }

  /** Number of jobs running or waiting. */
  get load(): number {
    return this.queue.length + this.workers.filter((w) => w.job).length;
  }

  async dispose(): Promise<void> {
    this.disposed = true;
    for (const pending of this.queue.splice(0)) pending.reject(new JobCancelledError());
    await Promise.all(this.workers.splice(0).map((w) => this.retire(w, new Error('the analysis pool is shut down'))));
  }

  private cancel(pending: PendingJob): void {
    if (pending.cancelled) return;
    pending.cancelled = true;
    const queued = this.queue.indexOf(pending);
    if (queued >= 0) {
      this.queue.splice(queued, 1);
      pending.reject(new JobCancelledError());
      return;
    }
    const owner = this.workers.find((w) => w.job === pending);
    if (!owner) return;
    Atomics.store(owner.sharedCells, 0, pending.job.jobId);
    pending.graceTimer = setTimeout(() => {
      if (owner.job === pending) {
        this.options.log(
          `Terminating an analysis worker whose cancelled job did not stop within ${this.options.cancelGraceMs} ms.`,
        );
        void this.retire(owner, new JobCancelledError());
        this.pump();
      }
    }, this.options.cancelGraceMs);
  }

  private pump(): void {
    while (this.queue.length > 0 && !this.disposed) {
      const next = this.queue[0];
      // A worker that read this document last re-reads an edit of it fastest (lsp/worker.ts).
      let idle =
        this.workers.find((w) => !w.job && !w.retired && w.recentUris.includes(next.job.uri)) ??
        this.workers.find((w) => !w.job && !w.retired);
      if (!idle) {
        if (this.workers.filter((w) => !w.retired).length >= this.options.size) return;
        idle = this.spawn();
      }
      const pending = this.queue.shift()!;
      idle.job = pending;
      idle.recentUris = [...idle.recentUris.filter((uri) => uri !== pending.job.uri), pending.job.uri].slice(
        -REMEMBERED_DOCUMENTS,
      );
      Atomics.store(idle.sharedCells, 0, 0);
      // Counted before posting, so that a worker practising on its own (practice.ts) stops for the job.
      Atomics.add(idle.sharedCells, 1, 1);
      idle.worker.postMessage(pending.job);
    }
  }

  private spawn(): PooledWorker {
    const cancelBuffer = new SharedArrayBuffer(8);
    const worker = new Worker(this.options.script, { workerData: { cancelBuffer } });
    const pooled: PooledWorker = { worker, sharedCells: new Int32Array(cancelBuffer), retired: false, recentUris: [] };
    worker.on('message', (reply: WorkerReply) => this.onReply(pooled, reply));
    worker.on('error', (error) => {
      this.options.log(`An analysis worker failed: ${error.stack ?? error.message}`);
      void this.retire(pooled, error);
      this.pump();
    });
    worker.on('exit', (code) => {
      if (!pooled.retired) {
        this.options.log(`An analysis worker exited unexpectedly with code ${code}.`);
        void this.retire(pooled, new Error(`the analysis worker exited with code ${code}`));
        this.pump();
      }
    });
    // A worker must not keep the server alive once the connection has closed.
    worker.unref();
    this.workers.push(pooled);
    return pooled;
  }

  private onReply(pooled: PooledWorker, reply: WorkerReply): void {
    if (reply.kind === 'ready') return;
    const pending = pooled.job;
    if (!pending || pending.job.jobId !== reply.jobId) return;
    pooled.job = undefined;
    clearTimeout(pending.graceTimer);
    if (pending.cancelled) pending.reject(new JobCancelledError());
    else if (reply.kind === 'done') pending.resolve(reply.snapshot);
    else pending.reject(new Error(reply.error));
    this.pump();
  }

  private async retire(pooled: PooledWorker, reason: Error): Promise<void> {
    if (pooled.retired) return;
    pooled.retired = true;
    const index = this.workers.indexOf(pooled);
    if (index >= 0) this.workers.splice(index, 1);
    const pending = pooled.job;
    pooled.job = undefined;
    if (pending) {
      clearTimeout(pending.graceTimer);
      pending.reject(pending.cancelled ? new JobCancelledError() : reason);
    }
    try {
      await pooled.worker.terminate();
    } catch {
      // The worker is gone either way.
    }
  }
}
