/** Workspace commands: show a rule's page, reveal a position, analyse every spec in the workspace. */
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import type { WorkspaceFolder } from 'vscode-languageserver/node';
import { DiagnosticSeverity } from 'vscode-languageserver-protocol';
import { isSpecPath } from '../../load/paths';
import { JobCancelledError } from '../pool';
import {
  COMMAND_ANALYZE_WORKSPACE,
  COMMAND_REVEAL,
  COMMAND_SHOW_RULE_DOC,
  type AnalysisSnapshot,
  type WorkspaceAnalysisSummary,
} from '../protocol';
import type { ServerState } from '../state';
import { fileName, filePath, readOrUndefined } from '../uris';
import { pushConfigFindings } from './diagnostics';

/** Folders never searched by "analyse the workspace". */
const SKIPPED_FOLDERS = new Set(['node_modules', '.git', 'dist', 'out', '.vscode-test']);
const MAX_WORKSPACE_FILES = 5000;

export function registerWorkspaceCommands(server: ServerState): void {
  server.connection.onExecuteCommand(
    server.guard('executeCommand', null as unknown, async (params) => {
      const args = params.arguments ?? [];
      switch (params.command) {
        case COMMAND_SHOW_RULE_DOC:
          return showRuleDocumentation(server, String(args[0]));
        case COMMAND_REVEAL: {
          const [uri, position] = args as [string, { line: number; character: number }];
          if (!server.capabilities.window?.showDocument?.support || typeof uri !== 'string') return false;
          const range = { start: position, end: position };
          return (await server.connection.window.showDocument({ uri, takeFocus: true, selection: range })).success;
        }
        case COMMAND_ANALYZE_WORKSPACE:
          return analyseWorkspace(server);
        default:
          return null;
      }
    }),
  );
}

async function showRuleDocumentation(server: ServerState, rule: string): Promise<boolean> {
  const file = server.docsFolder ? join(server.docsFolder, `${rule}.md`) : undefined;
  if (file && existsSync(file) && server.capabilities.window?.showDocument?.support) {
    return (await server.connection.window.showDocument({ uri: pathToFileURL(file).href, takeFocus: true })).success;
  }
  const text = file ? readOrUndefined(file) : undefined;
  void server.connection.window.showInformationMessage(
    text
      ? text.split('\n').slice(0, 5).join(' ').replace(/[#*`]/g, '').trim()
      : `Rule ${rule}: run 'episcope explain ${rule}' for its documentation.`,
  );
  return true;
}

async function analyseWorkspace(server: ServerState): Promise<WorkspaceAnalysisSummary> {
  const files: string[] = [];
  for (const folder of server.workspaceFolders) {
    const root = filePath(folder.uri);
    if (root) collectSpecs(root, files);
  }
  const summary: WorkspaceAnalysisSummary = { files: 0, errors: 0, warnings: 0, infos: 0, failed: 0 };
  const reporter = server.capabilities.window?.workDoneProgress
    ? await server.connection.window.createWorkDoneProgress()
    : undefined;
  reporter?.begin('Episcope', 0, `Analysing ${files.length} spec files`, false);
  let done = 0;
  await Promise.all(
    files.map(async (path) => {
      const uri = pathToFileURL(path).href;
      const open = server.documents.get(uri);
      let snapshot: AnalysisSnapshot | undefined;
      try {
        if (open) snapshot = await server.scheduler.current(uri);
        else snapshot = await server.pool.run(await server.job(uri, path, 0, readFileSync(path, 'utf8'))).promise;
      } catch (error) {
        if (!(error instanceof JobCancelledError))
          server.logError(`Analysing ${path} failed: ${error instanceof Error ? error.message : String(error)}`);
        summary.failed++;
      }
      done++;
      reporter?.report(
        Math.round((100 * done) / Math.max(files.length, 1)),
        `${done}/${files.length}: ${fileName(uri)}`,
      );
      if (!snapshot) return;
      summary.files++;
      for (const d of snapshot.diagnostics) {
        if (d.severity === DiagnosticSeverity.Error) summary.errors++;
        else if (d.severity === DiagnosticSeverity.Warning) summary.warnings++;
        else summary.infos++;
      }
      pushConfigFindings(server, snapshot);
      if (!open) {
        server.workspacePushed.add(uri);
        void server.connection.sendDiagnostics({ uri, diagnostics: snapshot.diagnostics });
      }
    }),
  );
  reporter?.done();
  return summary;
}

/** The innermost workspace folder holding `path`, else the file's own folder: where a new config file goes. */
export function folderFor(workspaceFolders: readonly WorkspaceFolder[], path: string): string {
  let best: string | undefined;
  for (const folder of workspaceFolders) {
    const root = filePath(folder.uri);
    if (
      root &&
      (path === root || path.startsWith(root.endsWith('/') ? root : `${root}/`)) &&
      (!best || root.length > best.length)
    )
      best = root;
  }
  return best ?? join(path, '..');
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
