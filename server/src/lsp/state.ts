/**
 * The language server's state, in one place: the connection, the open documents, the analysis
 * pool and scheduler, what the client can do, and what was last shown. The features (features/*.ts)
 * read and change it; none keeps state of its own.
 */
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import {
  ResponseError,
  type ClientCapabilities,
  type Connection,
  type WorkspaceFolder,
} from 'vscode-languageserver/node';
import { DocumentStore } from './documents';
import { WorkerPool } from './pool';
import { STATUS_NOTIFICATION, type AnalysisSnapshot, type StatusParams } from './protocol';
import type { AnalysisScheduler, JobInput } from './scheduler';
import { DEFAULT_SETTINGS, readSettings, type EpiscopeSettings } from './settings';
import { filePath, isConfigUri } from './uris';

export interface ServerOptions {
  /** Defaults to a connection over the transport named on the command line (--stdio, --node-ipc, --socket=N). */
  connection?: Connection;
  /** False forbids running TypeScript model code whatever the client says (`episcope server --no-exec`). */
  exec?: boolean;
  /**
   * True runs model code unless the client says the workspace is not trusted (`--run-model-code`).
   * Without it model code runs only when the client says `initializationOptions.trusted: true`, so an
   * editor that knows nothing of trust never runs the code of a repository it opens.
   */
  runModelCode?: boolean;
  /** The bundled worker script; defaults to analysis-worker.js beside this bundle. */
  workerScript?: string;
  /** Folder of the rule pages; defaults to docs/rules beside this bundle. */
  docsFolder?: string;
  /** Analysis workers running at once (default 2). */
  workers?: number;
}

export class ServerState {
  readonly documents = new DocumentStore();
  readonly pool: WorkerPool;
  readonly docsFolder: string | undefined;
  /** Set by startServer right after construction (its callbacks need the features). */
  scheduler!: AnalysisScheduler;

  capabilities: ClientCapabilities = {};
  pullDiagnostics = false;
  workspaceFolders: WorkspaceFolder[] = [];
  /** Set from the start flag here, then from the client's initializationOptions and trust notifications. */
  trusted: boolean;
  initialSettings: unknown;
  globalSettings: EpiscopeSettings = DEFAULT_SETTINGS;
  readonly settingsCache = new Map<string, Promise<EpiscopeSettings>>();
  /** The result id of each snapshot answered to a pull, so an unchanged result is answered as such. */
  readonly resultIds = new WeakMap<AnalysisSnapshot, string>();
  private resultCounter = 0;
  /** The lens titles last shown per URI, so the client is asked to refresh only on a change. */
  readonly lensShown = new Map<string, string>();
  /** URIs given diagnostics by "analyse the workspace" (push), cleared when the file is opened. */
  readonly workspacePushed = new Set<string>();
  /** Config files whose findings were pushed, with the text they were computed from. */
  readonly configPushed = new Map<string, string>();
  /** Each config file as the latest analysis read it (by URI): its problems answer pulls for the open file. */
  readonly configFiles = new Map<string, NonNullable<AnalysisSnapshot['configFile']>>();

  constructor(
    readonly connection: Connection,
    readonly options: ServerOptions,
  ) {
    this.trusted = options.runModelCode === true;
    const here = typeof __dirname === 'string' ? __dirname : process.cwd();
    const docsCandidate = options.docsFolder ?? join(here, 'docs', 'rules');
    this.docsFolder = existsSync(docsCandidate) ? docsCandidate : undefined;
    this.pool = new WorkerPool({
      script: options.workerScript ?? join(here, 'analysis-worker.js'),
      size: options.workers ?? 2,
      cancelGraceMs: 50,
      log: (message) => this.log(message),
    });
  }

  log(message: string): void {
    this.connection.console.log(message);
  }

  logError(message: string): void {
    this.connection.console.error(message);
  }

  nextResultId(snapshot: AnalysisSnapshot): void {
    this.resultIds.set(snapshot, String(++this.resultCounter));
  }

  /** Wraps a request handler: a failure is logged and answered with `fallback`, never taking down the server. */
  guard<P extends unknown[], R>(
    name: string,
    fallback: R,
    handler: (...args: P) => R | Promise<R>,
  ): (...args: P) => Promise<R> {
    return async (...args: P) => {
      try {
        return await handler(...args);
      } catch (error) {
        if (error instanceof ResponseError) throw error;
        this.logError(`${name} failed: ${error instanceof Error ? (error.stack ?? error.message) : String(error)}`);
        return fallback;
      }
    };
  }

  /**
   * A notification handler returns nothing to the client, so its promise is settled here: a
   * failure is logged (by guard) and never left as an unhandled rejection.
   */
  guardNotification<P extends unknown[]>(
    name: string,
    handler: (...args: P) => void | Promise<void>,
  ): (...args: P) => void {
    const guarded = this.guard(name, undefined, handler);
    return (...args: P) => {
      guarded(...args).catch((error: unknown) =>
        this.logError(`${name} failed: ${error instanceof Error ? error.message : String(error)}`),
      );
    };
  }

  async settingsFor(uri: string): Promise<EpiscopeSettings> {
    if (!this.capabilities.workspace?.configuration) return this.globalSettings;
    let settings = this.settingsCache.get(uri);
    if (!settings) {
      settings = this.connection.workspace
        .getConfiguration({ scopeUri: uri, section: 'episcope' })
        .then((raw: unknown) => readSettings(raw ?? this.initialSettings))
        .catch(() => this.globalSettings);
      this.settingsCache.set(uri, settings);
    }
    return settings;
  }

  /** An analysis job for a spec's text, with the settings and open config files that apply. */
  async job(uri: string, path: string, version: number, text: string, settings?: EpiscopeSettings): Promise<JobInput> {
    const applying = settings ?? (await this.settingsFor(uri));
    return {
      uri,
      version,
      path,
      text,
      settings: applying,
      openConfigTexts: this.openConfigTexts(),
      exec: this.options.exec !== false && this.trusted && applying.executeModelCode,
      docsFolder: this.docsFolder,
    };
  }

  /** Config files open in the editor: their unsaved text is what applies. */
  openConfigTexts(): Record<string, string> {
    const texts: Record<string, string> = {};
    for (const document of this.documents.all()) {
      const path = isConfigUri(document.uri) ? filePath(document.uri) : undefined;
      if (path) texts[path] = document.getText();
    }
    return texts;
  }

  sendStatus(params: StatusParams): void {
    void this.connection.sendNotification(STATUS_NOTIFICATION, params).catch(() => undefined);
  }
}
