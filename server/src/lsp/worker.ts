/**
 * The analysis worker (bundled as dist/analysis-worker.js): runs the pipeline off the language
 * server's main thread, so hovers and edits are answered while a large spec is analysed. One job at
 * a time; the main thread cancels a job by writing its id into the shared cancel cell, which the
 * pipeline checks between phases (and terminates the worker if that does not come soon enough).
 */
import { dirname, isAbsolute } from 'node:path';
import { parentPort, workerData } from 'node:worker_threads';
import { analyzeFile } from '../analyze';
import { DEFAULT_CONFIG } from '../config';
import { findConfigFile, loadConfigFile, parseConfigText, type ConfigFile } from '../config-file';
import { JsonReadMemory } from '../load/json';
import { mergeSettings } from './settings';
import { REMEMBERED_DOCUMENTS, type AnalysisJob, type WorkerReply } from './protocol';
import { buildSnapshot, transferList } from './snapshot';

const port = parentPort;
if (!port) throw new Error('analysis-worker.js must run as a worker thread');
const cancelCell = new Int32Array((workerData as { cancelBuffer: SharedArrayBuffer }).cancelBuffer);

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
    const report = await analyzeFile(job.path, job.text, {
      config: mergeSettings(configFile?.config ?? DEFAULT_CONFIG, job.settings),
      exec: job.exec,
      // Hovers and the summary lens show values even when no enabled rule needs them.
      analysis: true,
      startFrom: job.startFrom,
      keepSolution: true,
      readMemory: readMemoryOf(job.uri),
      isCancelled: () => Atomics.load(cancelCell, 0) === job.jobId,
    });
    const snapshot = buildSnapshot({
      uri: job.uri,
      version: job.version,
      report,
      docsFolder: job.docsFolder,
      configFile,
      durationMs: performance.now() - started,
    });
    snapshot.solution = report.analysis?.solution;
    post({ kind: 'done', jobId: job.jobId, snapshot }, transferList(snapshot));
  } catch (error) {
    post({
      kind: 'failed',
      jobId: job.jobId,
      error: error instanceof Error ? (error.stack ?? error.message) : String(error),
    });
  }
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
