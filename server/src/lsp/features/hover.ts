/** Hover: answered from the last completed analysis, mapped through the edits made since, never waiting for a run. */
import type { Hover, Position } from 'vscode-languageserver/node';
import type { TextDocument } from 'vscode-languageserver-textdocument';
import type { DocumentStore } from '../documents';
import { hoverAt } from '../hover';
import type { AnalysisSnapshot } from '../protocol';
import type { ServerState } from '../state';

/** The hover at `position` of the current text, from `snapshot` (possibly of an older version). */
export function hoverFor(
  documents: DocumentStore,
  document: TextDocument,
  snapshot: AnalysisSnapshot,
  position: Position,
): Hover | null {
  const uri = document.uri;
  const offset = documents.toVersion(uri, document.offsetAt(position), snapshot.version);
  if (offset === undefined) return null;
  const answer = hoverAt(snapshot, offset);
  if (!answer) return null;
  const start = documents.fromVersion(uri, answer.start, snapshot.version);
  const end = documents.fromVersion(uri, answer.end, snapshot.version);
  const stale =
    snapshot.version !== document.version
      ? '\n\n_From the analysis of an earlier version; a newer one is running._'
      : '';
  return {
    contents: { kind: 'markdown', value: answer.markdown + stale },
    range:
      start !== undefined && end !== undefined
        ? { start: document.positionAt(start), end: document.positionAt(end) }
        : undefined,
  };
}

export function registerHover(server: ServerState): void {
  server.connection.onHover(
    server.guard('hover', null as Hover | null, (params) => {
      const document = server.documents.get(params.textDocument.uri);
      const snapshot = server.scheduler.latest(params.textDocument.uri);
      return document && snapshot ? hoverFor(server.documents, document, snapshot, params.position) : null;
    }),
  );
}
