/**
 * Document sync and what makes every open spec be analysed again: edits, config files changing,
 * settings, workspace trust.
 */
import { FileChangeType } from 'vscode-languageserver/node';
import { TRUST_NOTIFICATION, type TrustParams } from '../protocol';
import { readSettings } from '../settings';
import type { ServerState } from '../state';
import { isConfigUri, isSpecUri } from '../uris';

export function registerDocumentSync(server: ServerState): void {
  const { connection, documents } = server;
  connection.onDidOpenTextDocument(
    server.guardNotification('didOpen', (params) => {
      const { uri, languageId, version, text } = params.textDocument;
      documents.open(uri, languageId, version, text);
      if (isConfigUri(uri)) configChanged(server, uri);
      else if (isSpecUri(uri)) {
        if (server.workspacePushed.delete(uri) && server.pullDiagnostics)
          void connection.sendDiagnostics({ uri, diagnostics: [] });
        server.scheduler.schedule(uri, true);
      }
    }),
  );

  connection.onDidChangeTextDocument(
    server.guardNotification('didChange', (params) => {
      const { uri, version } = params.textDocument;
      if (!documents.change(uri, version, params.contentChanges)) return;
      if (isConfigUri(uri)) configChanged(server, uri);
      else if (isSpecUri(uri)) server.scheduler.schedule(uri);
    }),
  );

  connection.onDidCloseTextDocument(
    server.guardNotification('didClose', (params) => {
      const uri = params.textDocument.uri;
      documents.close(uri);
      server.lensShown.delete(uri);
      if (isConfigUri(uri)) configChanged(server, uri);
      if (!isSpecUri(uri)) return;
      server.scheduler.forget(uri);
      if (!server.pullDiagnostics) void connection.sendDiagnostics({ uri, diagnostics: [] });
    }),
  );

  connection.onDidChangeConfiguration(
    server.guardNotification('didChangeConfiguration', (params) => {
      server.settingsCache.clear();
      const settings = (params.settings as { episcope?: unknown } | null)?.episcope;
      if (settings !== undefined) server.globalSettings = readSettings(settings);
      reanalyseAll(server);
    }),
  );

  connection.onDidChangeWatchedFiles(
    server.guardNotification('didChangeWatchedFiles', (params) => {
      const configEvents = params.changes.filter((c) => isConfigUri(c.uri));
      if (configEvents.length === 0) return;
      for (const change of configEvents) {
        if (change.type === FileChangeType.Deleted) {
          server.configPushed.delete(change.uri);
          void connection.sendDiagnostics({ uri: change.uri, diagnostics: [] });
        }
      }
      reanalyseAll(server);
    }),
  );

  connection.onNotification(
    TRUST_NOTIFICATION,
    server.guardNotification('trust', (params: TrustParams) => {
      if (typeof params?.trusted !== 'boolean' || params.trusted === server.trusted) return;
      server.trusted = params.trusted;
      reanalyseAll(server);
    }),
  );
}

function configChanged(server: ServerState, uri: string): void {
  server.configPushed.delete(uri);
  reanalyseAll(server);
}

function reanalyseAll(server: ServerState): void {
  for (const document of server.documents.all()) {
    if (isSpecUri(document.uri)) server.scheduler.schedule(document.uri, true);
  }
  if (server.pullDiagnostics && server.capabilities.workspace?.diagnostics?.refreshSupport)
    server.connection.languages.diagnostics.refresh();
}
