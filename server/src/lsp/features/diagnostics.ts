/**
 * Diagnostics: what an analysis found, pushed to clients that do not pull, answered to pulls
 * otherwise; a config file's own problems; the status notifications and progress of a run.
 */
import {
  DocumentDiagnosticReportKind,
  LSPErrorCodes,
  ResponseError,
  type DocumentDiagnosticReport,
} from 'vscode-languageserver/node';
import { DiagnosticSeverity } from 'vscode-languageserver-protocol';
import type { AnalysisSnapshot } from '../protocol';
import type { JobInput } from '../scheduler';
import type { ServerState } from '../state';
import { fileName, filePath, isConfigUri, isSpecUri } from '../uris';
import { refreshLensIfChanged } from './lens';

/** Analyses taking longer than this show progress in the editor. */
const PROGRESS_AFTER_MS = 300;

/** The scheduler's job for an open document, or undefined when there is none or Episcope is off for it. */
export async function prepareJob(server: ServerState, uri: string): Promise<JobInput | undefined> {
  const document = server.documents.get(uri);
  if (!document) return undefined;
  const settings = await server.settingsFor(uri);
  if (!settings.enable) {
    server.sendStatus({ uri, state: 'off', text: 'Episcope is turned off (episcope.enable)' });
    return undefined;
  }
  return server.job(uri, filePath(uri) ?? uri, document.version, document.getText(), settings);
}

/** Status and, past PROGRESS_AFTER_MS, work-done progress for a run; returns what ends them. */
export function runStarted(server: ServerState, uri: string, job: JobInput): () => void {
  server.sendStatus({ uri, state: 'analysing', text: `analysing ${fileName(uri)}` });
  let progress: { done(): void } | undefined;
  let ended = false;
  const timer = setTimeout(() => {
    if (!server.capabilities.window?.workDoneProgress) return;
    server.connection.window.createWorkDoneProgress().then(
      (reporter) => {
        if (ended) reporter.done();
        else {
          reporter.begin('Episcope', undefined, `Analysing ${fileName(uri)} (version ${job.version})`);
          progress = reporter;
        }
      },
      () => undefined,
    );
  }, PROGRESS_AFTER_MS);
  return () => {
    ended = true;
    clearTimeout(timer);
    progress?.done();
  };
}

export function analysisCompleted(server: ServerState, snapshot: AnalysisSnapshot, current: boolean): void {
  server.nextResultId(snapshot);
  pushConfigFindings(server, snapshot);
  for (const error of snapshot.internalErrors) server.logError(`${fileName(snapshot.uri)}: ${error}`);
  // Model code's prints go to the log only: the server's stdout is the JSON-RPC stream.
  if (snapshot.modelOutput) server.log(`${fileName(snapshot.uri)}: model output:\n${snapshot.modelOutput}`);
  if (server.scheduler.latest(snapshot.uri) === snapshot) server.documents.forgetBefore(snapshot.uri, snapshot.version);
  if (!current) return;
  server.sendStatus({ uri: snapshot.uri, state: 'done', text: snapshot.status });
  if (!server.pullDiagnostics)
    void server.connection.sendDiagnostics({
      uri: snapshot.uri,
      version: snapshot.version,
      diagnostics: snapshot.diagnostics,
    });
  refreshLensIfChanged(server, snapshot);
}

export function analysisFailed(
  server: ServerState,
  uri: string,
  job: JobInput | undefined,
  error: Error,
): AnalysisSnapshot {
  server.logError(`Analysing ${uri} failed: ${error.stack ?? error.message}`);
  server.sendStatus({ uri, state: 'failed', text: `analysis failed: ${error.message}` });
  const snapshot = failedSnapshot(uri, job?.version ?? server.documents.get(uri)?.version ?? 0, error);
  server.nextResultId(snapshot);
  if (!server.pullDiagnostics)
    void server.connection.sendDiagnostics({ uri, version: snapshot.version, diagnostics: snapshot.diagnostics });
  return snapshot;
}

/** What the editor shows when a run failed: one diagnostic that says the findings are missing. */
export function failedSnapshot(uri: string, version: number, error: Error): AnalysisSnapshot {
  return {
    uri,
    version,
    diagnostics: [
      {
        range: { start: { line: 0, character: 0 }, end: { line: 0, character: 0 } },
        severity: DiagnosticSeverity.Error,
        source: 'episcope',
        message: `Episcope could not analyse this file (${error.message.split('\n')[0]}); its findings are missing until it can. The server's output has the details.`,
      },
    ],
    rootOffset: 0,
    lens: [],
    status: 'analysis failed',
    fixedHovers: [],
    internalErrors: [],
    durationMs: 0,
    cancelled: false,
  };
}

/**
 * A config file's own problems are shown on it: pushed, since it is usually not open (and when it
 * is open in a pull client, answered by the pull handler instead).
 */
export function pushConfigFindings(server: ServerState, snapshot: AnalysisSnapshot): void {
  const file = snapshot.configFile;
  if (!file) return;
  server.configFiles.set(file.uri, file);
  if (server.pullDiagnostics && server.documents.get(file.uri)) {
    // The open config file's problems are pulled; ask the client to pull again now that they are known.
    if (server.configPushed.get(file.uri) !== file.text && server.capabilities.workspace?.diagnostics?.refreshSupport) {
      server.configPushed.set(file.uri, file.text);
      server.connection.languages.diagnostics.refresh();
    }
    return;
  }
  if (server.configPushed.get(file.uri) === file.text) return;
  server.configPushed.set(file.uri, file.text);
  void server.connection.sendDiagnostics({ uri: file.uri, diagnostics: file.diagnostics });
}

/** Answers `textDocument/diagnostic` (pull) from the current analysis, waiting for it if it runs. */
export function registerDiagnostics(server: ServerState): void {
  server.connection.languages.diagnostics.on(
    server.guard(
      'textDocument/diagnostic',
      { kind: DocumentDiagnosticReportKind.Full, items: [] } as DocumentDiagnosticReport,
      async (params, token) => {
        const uri = params.textDocument.uri;
        if (isConfigUri(uri)) {
          const file = server.configFiles.get(uri);
          const current = file && file.text === server.documents.get(uri)?.getText();
          return { kind: DocumentDiagnosticReportKind.Full, items: current ? file.diagnostics : [] };
        }
        if (!isSpecUri(uri) || !server.documents.get(uri))
          return { kind: DocumentDiagnosticReportKind.Full, items: [] };
        const snapshot = await Promise.race([
          server.scheduler.current(uri),
          new Promise<'cancelled'>((resolve) => token.onCancellationRequested(() => resolve('cancelled'))),
        ]);
        if (snapshot === 'cancelled') throw new ResponseError(LSPErrorCodes.RequestCancelled, 'cancelled');
        if (!snapshot) return { kind: DocumentDiagnosticReportKind.Full, items: [] };
        const resultId = server.resultIds.get(snapshot);
        if (resultId !== undefined && params.previousResultId === resultId)
          return { kind: DocumentDiagnosticReportKind.Unchanged, resultId };
        return { kind: DocumentDiagnosticReportKind.Full, resultId, items: snapshot.diagnostics };
      },
    ),
  );
}
