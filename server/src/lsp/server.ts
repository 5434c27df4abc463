/**
 * The Episcope language server: a thin front over the same analysis call as the command line.
 * Documents are analysed in worker threads (see scheduler.ts, pool.ts); this module wires the LSP
 * requests to them. Every handler is wrapped so that a failure is logged and answered with an empty
 * result, never taking the process down.
 */
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import {
  CodeActionKind,
  CodeLensRefreshRequest,
  DidChangeConfigurationNotification,
  DidChangeWatchedFilesNotification,
  DocumentDiagnosticReportKind,
  FileChangeType,
  LSPErrorCodes,
  ProposedFeatures,
  ResponseError,
  TextDocumentSyncKind,
  createConnection,
  type ClientCapabilities,
  type CodeLens,
  type Connection,
  type Diagnostic,
  type DocumentDiagnosticReport,
  type Hover,
  type InitializeResult,
  type WorkspaceFolder,
} from 'vscode-languageserver/node';
import { codeActions } from './code-actions';
import { DocumentStore } from './documents';
import { hoverAt } from './hover';
import { JobCancelledError, WorkerPool } from './pool';
import {
  COMMAND_ANALYZE_WORKSPACE,
  COMMAND_REVEAL,
  COMMAND_SHOW_RULE_DOC,
  SERVER_COMMANDS,
  STATUS_NOTIFICATION,
  TRUST_NOTIFICATION,
  type AnalysisSnapshot,
  type StatusParams,
  type TrustParams,
  type WorkspaceAnalysisSummary,
} from './protocol';
import { AnalysisScheduler, type JobInput } from './scheduler';
import { isSpecPath } from '../spec/paths';
import { DEFAULT_SETTINGS, readSettings, type EpiscopeSettings } from './settings';
import { DiagnosticSeverity } from 'vscode-languageserver-protocol';
import { version } from '../../../package.json';

export interface ServerOptions {
  /** Defaults to a connection over the transport named on the command line (--stdio, --node-ipc, --socket=N). */
  connection?: Connection;
  /** False forbids running TypeScript model code whatever the client says (`episcope server --no-exec`). */
  exec?: boolean;
  /** The bundled worker script; defaults to analysis-worker.js beside this bundle. */
  workerScript?: string;
  /** Folder of the rule pages; defaults to docs/rules beside this bundle. */
  docsFolder?: string;
  /** Analysis workers running at once (default 2). */
  workers?: number;
}

/** Analyses taking longer than this show progress in the editor. */
const PROGRESS_AFTER_MS = 300;
/** Folders never searched by "analyse the workspace". */
const SKIPPED_FOLDERS = new Set(['node_modules', '.git', 'dist', 'out', '.vscode-test']);
const MAX_WORKSPACE_FILES = 5000;

export function startServer(options: ServerOptions = {}): Connection {
  const connection = options.connection ?? createConnection(ProposedFeatures.all);
  const here = typeof __dirname === 'string' ? __dirname : process.cwd();
  const workerScript = options.workerScript ?? join(here, 'analysis-worker.js');
  const docsCandidate = options.docsFolder ?? join(here, 'docs', 'rules');
  const docsFolder = existsSync(docsCandidate) ? docsCandidate : undefined;
  const log = (message: string): void => connection.console.log(message);
  const logError = (message: string): void => connection.console.error(message);

  const documents = new DocumentStore();
  const pool = new WorkerPool({ script: workerScript, size: options.workers ?? 2, cancelGraceMs: 50, log });

  let capabilities: ClientCapabilities = {};
  let pullDiagnostics = false;
  let workspaceFolders: WorkspaceFolder[] = [];
  let trusted = true;
  let initialSettings: unknown;
  let globalSettings: EpiscopeSettings = DEFAULT_SETTINGS;
  const settingsCache = new Map<string, Promise<EpiscopeSettings>>();
  const resultIds = new WeakMap<AnalysisSnapshot, string>();
  let resultCounter = 0;
  const lensShown = new Map<string, string>();
  /** URIs given diagnostics by "analyse the workspace" (push), cleared when the file is opened. */
  const workspacePushed = new Set<string>();
  /** Config files whose findings were pushed, with the text they were computed from. */
  const configPushed = new Map<string, string>();
  /** Each config file as the latest analysis read it (by URI): its problems answer pulls for the open file. */
  const configFiles = new Map<string, NonNullable<AnalysisSnapshot['configFile']>>();

  const scheduler = new AnalysisScheduler(pool, {
    prepare: async (uri) => prepareJob(uri),
    started: (uri, job) => runStarted(uri, job),
    completed: (snapshot, current) => analysisCompleted(snapshot, current),
    failed: (uri, job, error) => analysisFailed(uri, job, error),
  });

  // ---------------------------------------------------------------------------------------------
  // Wrapping: one failing handler never takes down the server.

  function guard<P extends unknown[], R>(name: string, fallback: R, handler: (...args: P) => R | Promise<R>): (...args: P) => Promise<R> {
    return async (...args: P) => {
      try {
        return await handler(...args);
      } catch (error) {
        if (error instanceof ResponseError) throw error;
        logError(`${name} failed: ${error instanceof Error ? (error.stack ?? error.message) : String(error)}`);
        return fallback;
      }
    };
  }

  /**
   * A notification handler returns nothing to the client, so its promise is settled here: a
   * failure is logged (by guard) and never left as an unhandled rejection.
   */
  function guardNotification<P extends unknown[]>(name: string, handler: (...args: P) => void | Promise<void>): (...args: P) => void {
    const guarded = guard(name, undefined, handler);
    return (...args: P) => {
      guarded(...args).catch((error: unknown) => logError(`${name} failed: ${error instanceof Error ? error.message : String(error)}`));
    };
  }

  // ---------------------------------------------------------------------------------------------
  // Life cycle

  connection.onInitialize(
    guard('initialize', { capabilities: {} } as InitializeResult, (params) => {
      capabilities = params.capabilities;
      pullDiagnostics = !!capabilities.textDocument?.diagnostic;
      workspaceFolders = params.workspaceFolders ?? (params.rootUri ? [{ uri: params.rootUri, name: 'root' }] : []);
      const init = (params.initializationOptions ?? {}) as { trusted?: unknown; settings?: unknown };
      if (typeof init.trusted === 'boolean') trusted = init.trusted;
      initialSettings = init.settings;
      globalSettings = readSettings(initialSettings);
      const result: InitializeResult = {
        serverInfo: { name: 'episcope', version },
        capabilities: {
          textDocumentSync: { openClose: true, change: TextDocumentSyncKind.Incremental },
          hoverProvider: true,
          codeLensProvider: { resolveProvider: false },
          codeActionProvider: { codeActionKinds: [CodeActionKind.QuickFix] },
          executeCommandProvider: { commands: SERVER_COMMANDS },
          workspace: { workspaceFolders: { supported: true, changeNotifications: true } },
        },
      };
      if (pullDiagnostics) {
        result.capabilities.diagnosticProvider = { identifier: 'episcope', interFileDependencies: false, workspaceDiagnostics: false };
      }
      return result;
    }),
  );

  connection.onInitialized(
    guardNotification('initialized', async () => {
      pool.warmUp();
      if (capabilities.workspace?.didChangeConfiguration?.dynamicRegistration) {
        await connection.client.register(DidChangeConfigurationNotification.type, { section: 'episcope' });
      }
      if (capabilities.workspace?.didChangeWatchedFiles?.dynamicRegistration) {
        await connection.client.register(DidChangeWatchedFilesNotification.type, { watchers: [{ globPattern: '**/episcope.config.json' }] });
      }
      if (capabilities.workspace?.workspaceFolders) {
        connection.workspace.onDidChangeWorkspaceFolders((event) => {
          workspaceFolders = workspaceFolders.filter((f) => !event.removed.some((r) => r.uri === f.uri)).concat(event.added);
        });
      }
    }),
  );

  connection.onShutdown(
    guard('shutdown', undefined, async () => {
      scheduler.dispose();
      await pool.dispose();
    }),
  );

  // ---------------------------------------------------------------------------------------------
  // Documents

  connection.onDidOpenTextDocument(
    guardNotification('didOpen', (params) => {
      const { uri, languageId, version, text } = params.textDocument;
      documents.open(uri, languageId, version, text);
      if (isConfigUri(uri)) configChanged(uri);
      else if (isSpecUri(uri)) {
        if (workspacePushed.delete(uri) && pullDiagnostics) void connection.sendDiagnostics({ uri, diagnostics: [] });
        scheduler.schedule(uri, true);
      }
    }),
  );

  connection.onDidChangeTextDocument(
    guardNotification('didChange', (params) => {
      const { uri, version } = params.textDocument;
      if (!documents.change(uri, version, params.contentChanges)) return;
      if (isConfigUri(uri)) configChanged(uri);
      else if (isSpecUri(uri)) scheduler.schedule(uri);
    }),
  );

  connection.onDidCloseTextDocument(
    guardNotification('didClose', (params) => {
      const uri = params.textDocument.uri;
      documents.close(uri);
      lensShown.delete(uri);
      if (isConfigUri(uri)) configChanged(uri);
      if (!isSpecUri(uri)) return;
      scheduler.forget(uri);
      if (!pullDiagnostics) void connection.sendDiagnostics({ uri, diagnostics: [] });
    }),
  );

  connection.onDidChangeConfiguration(
    guardNotification('didChangeConfiguration', (params) => {
      settingsCache.clear();
      const settings = (params.settings as { episcope?: unknown } | null)?.episcope;
      if (settings !== undefined) globalSettings = readSettings(settings);
      reanalyseAll();
    }),
  );

  connection.onDidChangeWatchedFiles(
    guardNotification('didChangeWatchedFiles', (params) => {
      const configEvents = params.changes.filter((c) => isConfigUri(c.uri));
      if (configEvents.length === 0) return;
      for (const change of configEvents) {
        if (change.type === FileChangeType.Deleted) {
          configPushed.delete(change.uri);
          void connection.sendDiagnostics({ uri: change.uri, diagnostics: [] });
        }
      }
      reanalyseAll();
    }),
  );

  connection.onNotification(
    TRUST_NOTIFICATION,
    guardNotification('trust', (params: TrustParams) => {
      if (typeof params?.trusted !== 'boolean' || params.trusted === trusted) return;
      trusted = params.trusted;
      reanalyseAll();
    }),
  );

  function configChanged(uri: string): void {
    configPushed.delete(uri);
    reanalyseAll();
  }

  function reanalyseAll(): void {
    for (const document of documents.all()) {
      if (isSpecUri(document.uri)) scheduler.schedule(document.uri, true);
    }
    if (pullDiagnostics && capabilities.workspace?.diagnostics?.refreshSupport) connection.languages.diagnostics.refresh();
  }

  // ---------------------------------------------------------------------------------------------
  // Analysis

  async function settingsFor(uri: string): Promise<EpiscopeSettings> {
    if (!capabilities.workspace?.configuration) return globalSettings;
    let settings = settingsCache.get(uri);
    if (!settings) {
      settings = connection.workspace
        .getConfiguration({ scopeUri: uri, section: 'episcope' })
        .then((raw: unknown) => readSettings(raw ?? initialSettings))
        .catch(() => globalSettings);
      settingsCache.set(uri, settings);
    }
    return settings;
  }

  async function prepareJob(uri: string): Promise<JobInput | undefined> {
    const document = documents.get(uri);
    if (!document) return undefined;
    const settings = await settingsFor(uri);
    if (!settings.enable) {
      sendStatus({ uri, state: 'off', text: 'Episcope is turned off (episcope.enable)' });
      return undefined;
    }
    return {
      uri,
      version: document.version,
      path: filePath(uri) ?? uri,
      text: document.getText(),
      settings,
      openConfigTexts: openConfigTexts(),
      exec: options.exec !== false && trusted && settings.executeModelCode,
      docsFolder,
    };
  }

  /** Config files open in the editor: their unsaved text is what applies. */
  function openConfigTexts(): Record<string, string> {
    const texts: Record<string, string> = {};
    for (const document of documents.all()) {
      const path = isConfigUri(document.uri) ? filePath(document.uri) : undefined;
      if (path) texts[path] = document.getText();
    }
    return texts;
  }

  function runStarted(uri: string, job: JobInput): () => void {
    sendStatus({ uri, state: 'analysing', text: `analysing ${fileName(uri)}` });
    let progress: { done(): void } | undefined;
    let ended = false;
    const timer = setTimeout(() => {
      if (!capabilities.window?.workDoneProgress) return;
      connection.window.createWorkDoneProgress().then(
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

  function analysisCompleted(snapshot: AnalysisSnapshot, current: boolean): void {
    resultIds.set(snapshot, String(++resultCounter));
    pushConfigFindings(snapshot);
    for (const error of snapshot.internalErrors) logError(`${fileName(snapshot.uri)}: ${error}`);
    if (scheduler.latest(snapshot.uri) === snapshot) documents.forgetBefore(snapshot.uri, snapshot.version);
    if (!current) return;
    sendStatus({ uri: snapshot.uri, state: 'done', text: snapshot.status });
    if (!pullDiagnostics) void connection.sendDiagnostics({ uri: snapshot.uri, version: snapshot.version, diagnostics: snapshot.diagnostics });
    refreshLensIfChanged(snapshot);
  }

  function analysisFailed(uri: string, job: JobInput | undefined, error: Error): AnalysisSnapshot {
    logError(`Analysing ${uri} failed: ${error.stack ?? error.message}`);
    sendStatus({ uri, state: 'failed', text: `analysis failed: ${error.message}` });
    const snapshot: AnalysisSnapshot = {
      uri,
      version: job?.version ?? documents.get(uri)?.version ?? 0,
      diagnostics: [
        {
          range: { start: { line: 0, character: 0 }, end: { line: 0, character: 0 } },
          severity: DiagnosticSeverity.Error,
          source: 'episcope',
          message: `Episcope could not analyse this file (${firstLine(error.message)}); its findings are missing until it can. The server's output has the details.`,
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
    resultIds.set(snapshot, String(++resultCounter));
    if (!pullDiagnostics) void connection.sendDiagnostics({ uri, version: snapshot.version, diagnostics: snapshot.diagnostics });
    return snapshot;
  }

  function sendStatus(params: StatusParams): void {
    void connection.sendNotification(STATUS_NOTIFICATION, params).catch(() => undefined);
  }

  function refreshLensIfChanged(snapshot: AnalysisSnapshot): void {
    const key = snapshot.lens.join('\n') || (snapshot.notAnalysed ?? '');
    if (lensShown.get(snapshot.uri) === key) return;
    lensShown.set(snapshot.uri, key);
    if (capabilities.workspace?.codeLens?.refreshSupport) void connection.sendRequest(CodeLensRefreshRequest.type).catch(() => undefined);
  }

  /**
   * A config file's own problems are shown on it: pushed, since it is usually not open (and when it
   * is open in a pull client, answered by the pull handler instead).
   */
  function pushConfigFindings(snapshot: AnalysisSnapshot): void {
    const file = snapshot.configFile;
    if (!file) return;
    configFiles.set(file.uri, file);
    if (pullDiagnostics && documents.get(file.uri)) {
      // The open config file's problems are pulled; ask the client to pull again now that they are known.
      if (configPushed.get(file.uri) !== file.text && capabilities.workspace?.diagnostics?.refreshSupport) {
        configPushed.set(file.uri, file.text);
        connection.languages.diagnostics.refresh();
      }
      return;
    }
    if (configPushed.get(file.uri) === file.text) return;
    configPushed.set(file.uri, file.text);
    void connection.sendDiagnostics({ uri: file.uri, diagnostics: file.diagnostics });
  }

  // ---------------------------------------------------------------------------------------------
  // Diagnostics (pull)

  connection.languages.diagnostics.on(
    guard('textDocument/diagnostic', { kind: DocumentDiagnosticReportKind.Full, items: [] } as DocumentDiagnosticReport, async (params, token) => {
      const uri = params.textDocument.uri;
      if (isConfigUri(uri)) {
        const file = configFiles.get(uri);
        const current = file && file.text === documents.get(uri)?.getText();
        return { kind: DocumentDiagnosticReportKind.Full, items: current ? file.diagnostics : [] };
      }
      if (!isSpecUri(uri) || !documents.get(uri)) return { kind: DocumentDiagnosticReportKind.Full, items: [] };
      const snapshot = await Promise.race([
        scheduler.current(uri),
        new Promise<'cancelled'>((resolve) => token.onCancellationRequested(() => resolve('cancelled'))),
      ]);
      if (snapshot === 'cancelled') throw new ResponseError(LSPErrorCodes.RequestCancelled, 'cancelled');
      if (!snapshot) return { kind: DocumentDiagnosticReportKind.Full, items: [] };
      const resultId = resultIds.get(snapshot);
      if (resultId !== undefined && params.previousResultId === resultId) return { kind: DocumentDiagnosticReportKind.Unchanged, resultId };
      return { kind: DocumentDiagnosticReportKind.Full, resultId, items: snapshot.diagnostics };
    }),
  );

  // ---------------------------------------------------------------------------------------------
  // Hover, code lens, code actions: answered from the last completed analysis, never waiting for one.

  connection.onHover(
    guard('hover', null as Hover | null, (params) => {
      const uri = params.textDocument.uri;
      const document = documents.get(uri);
      const snapshot = scheduler.latest(uri);
      if (!document || !snapshot) return null;
      const offset = documents.toVersion(uri, document.offsetAt(params.position), snapshot.version);
      if (offset === undefined) return null;
      const answer = hoverAt(snapshot, offset);
      if (!answer) return null;
      const start = documents.fromVersion(uri, answer.start, snapshot.version);
      const end = documents.fromVersion(uri, answer.end, snapshot.version);
      const stale = snapshot.version !== document.version ? '\n\n_From the analysis of an earlier version; a newer one is running._' : '';
      return {
        contents: { kind: 'markdown', value: answer.markdown + stale },
        range: start !== undefined && end !== undefined ? { start: document.positionAt(start), end: document.positionAt(end) } : undefined,
      };
    }),
  );

  connection.onCodeLens(
    guard('codeLens', [] as CodeLens[], (params) => {
      const uri = params.textDocument.uri;
      const document = documents.get(uri);
      const snapshot = scheduler.latest(uri);
      if (!document || !snapshot) return [];
      const offset = documents.fromVersion(uri, snapshot.rootOffset, snapshot.version) ?? 0;
      const position = document.positionAt(offset);
      const range = { start: { line: position.line, character: 0 }, end: { line: position.line, character: 0 } };
      const titles = snapshot.lens.length > 0 ? snapshot.lens : snapshot.notAnalysed ? [`Episcope: no values (${snapshot.notAnalysed})`] : [];
      return titles.map((title) => ({ range, command: { title, command: '' } }));
    }),
  );

  connection.onCodeAction(
    guard('codeAction', [], (params) => {
      const uri = params.textDocument.uri;
      const document = documents.get(uri);
      if (!document || !isSpecUri(uri)) return [];
      const path = filePath(uri);
      const configFile = scheduler.latest(uri)?.configFile;
      const diagnostics = params.context.diagnostics.map((d) => withData(uri, d));
      const openConfig = configFile ? documents.get(configFile.uri) : undefined;
      const configText = openConfig?.getText() ?? (configFile ? readOrUndefined(configFile.path) : undefined);
      return codeActions({
        document,
        path,
        diagnostics,
        mapOffset: (offset, version) => documents.fromVersion(uri, offset, version),
        newConfigFolder: path ? folderFor(path) : undefined,
        configFile: configFile && configText !== undefined ? { path: configFile.path, text: configText, version: openConfig?.version ?? null } : undefined,
        documentChanges: !!capabilities.workspace?.workspaceEdit?.documentChanges,
        createFiles: !!capabilities.workspace?.workspaceEdit?.resourceOperations?.includes('create'),
        commands: true,
      });
    }),
  );

  /** Clients that drop `Diagnostic.data` get it back from the snapshot the diagnostic came from. */
  function withData(uri: string, diagnostic: Diagnostic): Diagnostic {
    if (diagnostic.data !== undefined || diagnostic.source !== 'episcope') return diagnostic;
    const snapshot = scheduler.latest(uri);
    const match = snapshot?.diagnostics.find(
      (d) =>
        d.code === diagnostic.code &&
        d.message === diagnostic.message &&
        d.range.start.line === diagnostic.range.start.line &&
        d.range.start.character === diagnostic.range.start.character,
    );
    return match ? { ...diagnostic, data: match.data } : diagnostic;
  }

  // ---------------------------------------------------------------------------------------------
  // Commands

  connection.onExecuteCommand(
    guard('executeCommand', null as unknown, async (params) => {
      const args = params.arguments ?? [];
      switch (params.command) {
        case COMMAND_SHOW_RULE_DOC:
          return showRuleDocumentation(String(args[0]));
        case COMMAND_REVEAL: {
          const [uri, position] = args as [string, { line: number; character: number }];
          if (!capabilities.window?.showDocument?.support || typeof uri !== 'string') return false;
          const range = { start: position, end: position };
          return (await connection.window.showDocument({ uri, takeFocus: true, selection: range })).success;
        }
        case COMMAND_ANALYZE_WORKSPACE:
          return analyseWorkspace();
        default:
          return null;
      }
    }),
  );

  async function showRuleDocumentation(rule: string): Promise<boolean> {
    const file = docsFolder ? join(docsFolder, `${rule}.md`) : undefined;
    if (file && existsSync(file) && capabilities.window?.showDocument?.support) {
      return (await connection.window.showDocument({ uri: pathToFileURL(file).href, takeFocus: true })).success;
    }
    const text = file ? readOrUndefined(file) : undefined;
    void connection.window.showInformationMessage(
      text ? text.split('\n').slice(0, 5).join(' ').replace(/[#*`]/g, '').trim() : `Rule ${rule}: run 'episcope explain ${rule}' for its documentation.`,
    );
    return true;
  }

  async function analyseWorkspace(): Promise<WorkspaceAnalysisSummary> {
    const files: string[] = [];
    for (const folder of workspaceFolders) {
      const root = filePath(folder.uri);
      if (root) collectSpecs(root, files);
    }
    const summary: WorkspaceAnalysisSummary = { files: 0, errors: 0, warnings: 0, infos: 0, failed: 0 };
    const reporter = capabilities.window?.workDoneProgress ? await connection.window.createWorkDoneProgress() : undefined;
    reporter?.begin('Episcope', 0, `Analysing ${files.length} spec files`, false);
    let done = 0;
    await Promise.all(
      files.map(async (path) => {
        const uri = pathToFileURL(path).href;
        const open = documents.get(uri);
        let snapshot: AnalysisSnapshot | undefined;
        try {
          if (open) snapshot = await scheduler.current(uri);
          else snapshot = await pool.run(await closedFileJob(uri, path)).promise;
        } catch (error) {
          if (!(error instanceof JobCancelledError)) logError(`Analysing ${path} failed: ${error instanceof Error ? error.message : String(error)}`);
          summary.failed++;
        }
        done++;
        reporter?.report(Math.round((100 * done) / Math.max(files.length, 1)), `${done}/${files.length}: ${fileName(uri)}`);
        if (!snapshot) return;
        summary.files++;
        for (const d of snapshot.diagnostics) {
          if (d.severity === DiagnosticSeverity.Error) summary.errors++;
          else if (d.severity === DiagnosticSeverity.Warning) summary.warnings++;
          else summary.infos++;
        }
        pushConfigFindings(snapshot);
        if (!open) {
          workspacePushed.add(uri);
          void connection.sendDiagnostics({ uri, diagnostics: snapshot.diagnostics });
        }
      }),
    );
    reporter?.done();
    return summary;
  }

  async function closedFileJob(uri: string, path: string): Promise<JobInput> {
    const settings = await settingsFor(uri);
    return {
      uri,
      version: 0,
      path,
      text: readFileSync(path, 'utf8'),
      settings,
      openConfigTexts: openConfigTexts(),
      exec: options.exec !== false && trusted && settings.executeModelCode,
      docsFolder,
    };
  }

  function folderFor(path: string): string | undefined {
    let best: string | undefined;
    for (const folder of workspaceFolders) {
      const root = filePath(folder.uri);
      if (root && (path === root || path.startsWith(root.endsWith('/') ? root : `${root}/`)) && (!best || root.length > best.length)) best = root;
    }
    return best ?? join(path, '..');
  }

  process.on('uncaughtException', (error) => logError(`Uncaught: ${error.stack ?? error.message}`));
  process.on('unhandledRejection', (reason) => logError(`Unhandled rejection: ${reason instanceof Error ? (reason.stack ?? reason.message) : String(reason)}`));

  connection.listen();
  log(`Episcope language server started (${docsFolder ? 'rule pages found' : 'rule pages not found'}; model code ${options.exec === false ? 'never runs' : 'runs in trusted workspaces'}).`);
  return connection;
}

function collectSpecs(folder: string, out: string[]): void {
  let entries;
  try {
    entries = readdirSync(folder, { withFileTypes: true });
  } catch {
    return;
  }
  for (const entry of entries) {
    if (out.length >= MAX_WORKSPACE_FILES) return;
    const path = join(folder, entry.name);
    if (entry.isDirectory()) {
      if (!SKIPPED_FOLDERS.has(entry.name) && !entry.name.startsWith('.')) collectSpecs(path, out);
    } else if (entry.isFile() && isSpecPath(entry.name)) out.push(path);
  }
}

function readOrUndefined(path: string): string | undefined {
  try {
    return readFileSync(path, 'utf8');
  } catch {
    return undefined;
  }
}

function filePath(uri: string): string | undefined {
  if (!uri.startsWith('file:')) return undefined;
  try {
    return fileURLToPath(uri);
  } catch {
    return undefined;
  }
}

function isSpecUri(uri: string): boolean {
  return isSpecPath(uri.split(/[?#]/)[0]);
}

function isConfigUri(uri: string): boolean {
  return uri.split(/[?#]/)[0].endsWith('/episcope.config.json');
}

function fileName(uri: string): string {
  const clean = uri.split(/[?#]/)[0];
  return decodeURIComponent(clean.slice(clean.lastIndexOf('/') + 1));
}

function firstLine(text: string): string {
  return text.split('\n')[0];
}
