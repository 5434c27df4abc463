/** The summary lens above the spec: the start state's value ranges, or why there are none. */
import { CodeLensRefreshRequest, type CodeLens } from 'vscode-languageserver/node';
import type { TextDocument } from 'vscode-languageserver-textdocument';
import type { DocumentStore } from '../documents';
import type { AnalysisSnapshot } from '../protocol';
import type { ServerState } from '../state';

/** The lenses of a document from its last completed analysis, placed at the spec's first line in the current text. */
export function lensesFor(documents: DocumentStore, document: TextDocument, snapshot: AnalysisSnapshot): CodeLens[] {
  const offset = documents.fromVersion(document.uri, snapshot.rootOffset, snapshot.version) ?? 0;
  const position = document.positionAt(offset);
  const range = { start: { line: position.line, character: 0 }, end: { line: position.line, character: 0 } };
  const titles =
    snapshot.lens.length > 0
      ? snapshot.lens
      : snapshot.notAnalysed
        ? [`Episcope: no values (${snapshot.notAnalysed})`]
        : [];
  return titles.map((title) => ({ range, command: { title, command: '' } }));
}

/** Asks the client to fetch lenses again when what they would show has changed. */
export function refreshLensIfChanged(server: ServerState, snapshot: AnalysisSnapshot): void {
  const key = snapshot.lens.join('\n') || (snapshot.notAnalysed ?? '');
  if (server.lensShown.get(snapshot.uri) === key) return;
  server.lensShown.set(snapshot.uri, key);
  if (server.capabilities.workspace?.codeLens?.refreshSupport)
    void server.connection.sendRequest(CodeLensRefreshRequest.type).catch(() => undefined);
}

export function registerLens(server: ServerState): void {
  server.connection.onCodeLens(
    server.guard('codeLens', [] as CodeLens[], (params) => {
      const document = server.documents.get(params.textDocument.uri);
      const snapshot = server.scheduler.latest(params.textDocument.uri);
      return document && snapshot ? lensesFor(server.documents, document, snapshot) : [];
    }),
  );
}
