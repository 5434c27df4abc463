/**
 * The Episcope language server: a thin front over the same analysis call as the command line.
 * Documents are analysed in worker threads (see scheduler.ts, pool.ts). This module holds the life
 * cycle and wires the features, one module each under features/ (document sync, diagnostics,
 * hover, lens, code actions, workspace commands), over the one ServerState (state.ts). Every
 * handler is wrapped so that a failure is logged and answered with an empty result, never taking
 * the process down.
 */
import {
  CodeActionKind,
  DidChangeConfigurationNotification,
  DidChangeWatchedFilesNotification,
  ProposedFeatures,
  TextDocumentSyncKind,
  createConnection,
  type Connection,
  type InitializeResult,
} from 'vscode-languageserver/node';
import { version } from '../../../package.json';
import { registerActions } from './features/actions';
import { analysisCompleted, analysisFailed, prepareJob, registerDiagnostics, runStarted } from './features/diagnostics';
import { registerDocumentSync } from './features/documents';
import { registerHover } from './features/hover';
import { registerLens } from './features/lens';
import { registerWorkspaceCommands } from './features/workspace';
import { SERVER_COMMANDS } from './protocol';
import { AnalysisScheduler } from './scheduler';
import { readSettings } from './settings';
import { ServerState, type ServerOptions } from './state';

export type { ServerOptions } from './state';

export function startServer(options: ServerOptions = {}): Connection {
  const connection = options.connection ?? createConnection(ProposedFeatures.all);
  const server = new ServerState(connection, options);
  server.scheduler = new AnalysisScheduler(server.pool, {
    prepare: async (uri) => prepareJob(server, uri),
    started: (uri, job) => runStarted(server, uri, job),
    completed: (snapshot, current) => analysisCompleted(server, snapshot, current),
    failed: (uri, job, error) => analysisFailed(server, uri, job, error),
  });

  registerLifeCycle(server);
  registerDocumentSync(server);
  registerDiagnostics(server);
  registerHover(server);
  registerLens(server);
  registerActions(server);
  registerWorkspaceCommands(server);

  process.on('uncaughtException', (error) => server.logError(`Uncaught: ${error.stack ?? error.message}`));
  process.on('unhandledRejection', (reason) =>
    server.logError(
      `Unhandled rejection: ${reason instanceof Error ? (reason.stack ?? reason.message) : String(reason)}`,
    ),
  );

  connection.listen();
  server.log(
    `Episcope language server started (${server.docsFolder ? 'rule pages found' : 'rule pages not found'}; model code ${options.exec === false ? 'never runs' : options.runModelCode ? 'runs unless the client says the workspace is not trusted' : 'runs only when the client says the workspace is trusted'}).`,
  );
  return connection;
}

function registerLifeCycle(server: ServerState): void {
  const { connection } = server;
  connection.onInitialize(
    server.guard('initialize', { capabilities: {} } as InitializeResult, (params) => {
      server.capabilities = params.capabilities;
      server.pullDiagnostics = !!server.capabilities.textDocument?.diagnostic;
      server.workspaceFolders =
        params.workspaceFolders ?? (params.rootUri ? [{ uri: params.rootUri, name: 'root' }] : []);
      const init = (params.initializationOptions ?? {}) as { trusted?: unknown; settings?: unknown };
      if (typeof init.trusted === 'boolean') server.trusted = init.trusted;
      server.initialSettings = init.settings;
      server.globalSettings = readSettings(server.initialSettings);
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
      if (server.pullDiagnostics) {
        result.capabilities.diagnosticProvider = {
          identifier: 'episcope',
          interFileDependencies: false,
          workspaceDiagnostics: false,
        };
      }
      return result;
    }),
  );

  connection.onInitialized(
    server.guardNotification('initialized', async () => {
      server.pool.warmUp();
      const workspace = server.capabilities.workspace;
      if (workspace?.didChangeConfiguration?.dynamicRegistration) {
        await connection.client.register(DidChangeConfigurationNotification.type, { section: 'episcope' });
      }
      if (workspace?.didChangeWatchedFiles?.dynamicRegistration) {
        await connection.client.register(DidChangeWatchedFilesNotification.type, {
          watchers: [{ globPattern: '**/episcope.config.json' }],
        });
      }
      if (workspace?.workspaceFolders) {
        connection.workspace.onDidChangeWorkspaceFolders((event) => {
          server.workspaceFolders = server.workspaceFolders
            .filter((f) => !event.removed.some((r) => r.uri === f.uri))
            .concat(event.added);
        });
      }
    }),
  );

  connection.onShutdown(
    server.guard('shutdown', undefined, async () => {
      server.scheduler.dispose();
      await server.pool.dispose();
    }),
  );
}
