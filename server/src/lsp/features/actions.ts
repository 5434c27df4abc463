/** Code actions: the rules' fixes, "ignore this rule here" and the rule's documentation (code-actions.ts builds them). */
import type { Diagnostic } from 'vscode-languageserver/node';
import { codeActions } from '../code-actions';
import type { AnalysisSnapshot } from '../protocol';
import type { ServerState } from '../state';
import { filePath, isSpecUri, readOrUndefined } from '../uris';
import { folderFor } from './workspace';

/** Clients that drop `Diagnostic.data` get it back from the snapshot the diagnostic came from. */
export function withData(snapshot: AnalysisSnapshot | undefined, diagnostic: Diagnostic): Diagnostic {
  if (diagnostic.data !== undefined || diagnostic.source !== 'episcope') return diagnostic;
  const match = snapshot?.diagnostics.find(
    (d) =>
      d.code === diagnostic.code &&
      d.message === diagnostic.message &&
      d.range.start.line === diagnostic.range.start.line &&
      d.range.start.character === diagnostic.range.start.character,
  );
  return match ? { ...diagnostic, data: match.data } : diagnostic;
}

export function registerActions(server: ServerState): void {
  server.connection.onCodeAction(
    server.guard('codeAction', [], (params) => {
      const uri = params.textDocument.uri;
      const document = server.documents.get(uri);
      if (!document || !isSpecUri(uri)) return [];
      const path = filePath(uri);
      const snapshot = server.scheduler.latest(uri);
      const configFile = snapshot?.configFile;
      const diagnostics = params.context.diagnostics.map((d) => withData(snapshot, d));
      const openConfig = configFile ? server.documents.get(configFile.uri) : undefined;
      const configText = openConfig?.getText() ?? (configFile ? readOrUndefined(configFile.path) : undefined);
      const edits = server.capabilities.workspace?.workspaceEdit;
      return codeActions({
        document,
        path,
        diagnostics,
        mapOffset: (offset, version) => server.documents.fromVersion(uri, offset, version),
        newConfigFolder: path ? folderFor(server.workspaceFolders, path) : undefined,
        configFile:
          configFile && configText !== undefined
            ? { path: configFile.path, text: configText, version: openConfig?.version ?? null }
            : undefined,
        documentChanges: !!edits?.documentChanges,
        createFiles: !!edits?.resourceOperations?.includes('create'),
        commands: true,
      });
    }),
  );
}
