/**
 * The analysis worker (bundled as dist/analysis-worker.js): runs the pipeline off the language
 * server's main thread, so hovers and edits are answered while a large spec is analysed. One job at
 * a time; the main thread cancels a job by writing its id into the shared cancel cell, which the
 * pipeline checks between phases (and terminates the worker if that does not come soon enough).
 * Once, after a small JSON document, the worker practises on it (practice.ts) until a job comes.
 */
import { dirname, isAbsolute } from 'node:path';
import { parentPort, workerData } from 'node:worker_threads';
import { analyzeFile, type AnalyzeOptions, type FileReport } from '../analyze';
import type { WarmStart } from '../analysis/warm-start';
import { DEFAULT_CONFIG } from '../config';
import { findConfigFile, loadConfigFile, parseConfigText, type ConfigFile } from '../config-file';
import { JsonReadMemory } from '../load/json';
import { mergeSettings } from './settings';
import { PRACTICE_LIMIT_MS, practiceEdit, practise } from './practice';
import { REMEMBERED_DOCUMENTS, type AnalysisJob, type AnalysisSnapshot, type WorkerReply } from './protocol';
import { buildSnapshot, transferList } from './snapshot';

const port = parentPort;
if (!port) throw new Error('analysis-worker.js must run as a worker thread');
/** [0]: the id of the job to cancel; [1]: how many jobs the pool has posted to this worker (pool.ts). */
const cells = new Int32Array((workerData as { cancelBuffer: SharedArrayBuffer }).cancelBuffer);
/** Whether this worker has practised yet (practice.ts): once is enough, since compiled code stays. */
let practised = false;

/**
 * The last read of each recently analysed document, most recent last (the pool sends a document's
 * jobs to the worker that read it last when it is free): an edit inside one value is then read by
 * patching that read. A few documents only, since each holds its text and tree.
 */
const readMemories = new Map<string, JsonReadMemory>();

function readMemoryOf(uri: string): JsonReadMemory {
  const memory = readMemories.get(uri) ?? new JsonReadMemory();
  readMemories.delete(uri);
  readMemories.set(uri, memory);
  if (readMemories.size > REMEMBERED_DOCUMENTS) readMemories.delete(readMemories.keys().next().value!);
  return memory;
}

port.on('message', (job: AnalysisJob) => {
  void runJob(job);
});
post({ kind: 'ready' });

async function runJob(job: AnalysisJob): Promise<void> {
  const started = performance.now();
  try {
    const configFile = configFor(job);
    const { report, snapshot } = await runPipeline(job, job.text, configFile, started, {
      startFrom: job.startFrom,
      readMemory: readMemoryOf(job.uri),
      isCancelled: () => Atomics.load(cells, 0) === job.jobId,
    });
    snapshot.solution = report.analysis?.solution;
    post({ kind: 'done', jobId: job.jobId, snapshot }, transferList(snapshot));
    if (!practised && !report.cancelled && snapshot.durationMs < PRACTICE_LIMIT_MS && job.path.endsWith('.mdp.json')) {
      practised = true;
      const edited = practiceEdit(job.text, report.spec);
      if (edited !== undefined) await practiseOn(job, configFile, edited, report.analysis?.solution);
    }
  } catch (error) {
    post({
      kind: 'failed',
      jobId: job.jobId,
      error: error instanceof Error ? (error.stack ?? error.message) : String(error),
    });
  }
}

/** The pipeline and the snapshot of its report, as a job runs them (its duration counted from `started`). */
async function runPipeline(
  job: AnalysisJob,
  text: string,
  configFile: ConfigFile | undefined,
  started: number,
  options: Pick<AnalyzeOptions, 'startFrom' | 'readMemory' | 'isCancelled'>,
): Promise<{ report: FileReport; snapshot: AnalysisSnapshot }> {
  const report = await analyzeFile(job.path, text, {
    config: mergeSettings(configFile?.config ?? DEFAULT_CONFIG, job.settings),
    exec: job.exec,
    // Hovers and the summary lens show values even when no enabled rule needs them.
    analysis: true,
    keepSolution: true,
    ...options,
  });
  const snapshot = buildSnapshot({
    uri: job.uri,
    version: job.version,
    report,
    docsFolder: job.docsFolder,
    configFile,
    durationMs: performance.now() - started,
  });
  return { report, snapshot };
}

/**
 * Practice edits of the job's document (practice.ts), with their own read memory and warm start,
 * results discarded, until the pool posts the next job.
 */
async function practiseOn(
  job: AnalysisJob,
  configFile: ConfigFile | undefined,
  edited: string,
  solution: WarmStart | undefined,
): Promise<void> {
  const postedBefore = Atomics.load(cells, 1);
  const jobWaiting = (): boolean => Atomics.load(cells, 1) !== postedBefore;
  const memory = new JsonReadMemory();
  let startFrom = solution;
  await practise(
    { original: job.text, edited },
    async (text) => {
      const options = { startFrom, readMemory: memory, isCancelled: jobWaiting };
      const { report } = await runPipeline(job, text, configFile, performance.now(), options);
      startFrom = report.analysis?.solution ?? startFrom;
    },
    jobWaiting,
  );
}

/** The nearest episcope.config.json above the spec (the command line's rule), the editor's text if it is open. */
function configFor(job: AnalysisJob): ConfigFile | undefined {
  if (!isAbsolute(job.path)) return undefined;
  const path = findConfigFile(dirname(job.path));
  if (!path) return undefined;
  const open = job.openConfigTexts[path];
  return open !== undefined ? parseConfigText(path, open) : loadConfigFile(path);
}

function post(reply: WorkerReply, transfer: ArrayBuffer[] = []): void {
  port!.postMessage(reply, transfer);
}
