/**
 * The VS Code extension: starts the Episcope language server (dist/server.js) over Node IPC, tells
 * it whether the workspace is trusted (TypeScript model code runs only in trusted folders), and adds
 * the commands, the language status item and the settings. Everything the editor shows comes from
 * the server, so any other LSP client gets the same diagnostics and hovers.
 */
import * as vscode from 'vscode';
import {
  LanguageClient,
  RevealOutputChannelOn,
  State,
  TransportKind,
  type LanguageClientOptions,
  type ServerOptions,
} from 'vscode-languageclient/node';
import {
  COMMAND_ANALYZE_WORKSPACE,
  STATUS_NOTIFICATION,
  TRUST_NOTIFICATION,
  type StatusParams,
  type WorkspaceAnalysisSummary,
} from '../../server/src/lsp/protocol';
import { severityCount } from '../../server/src/rules/types';

const SPEC_SELECTOR: Array<{ scheme: string; pattern: string }> = [
  { scheme: 'file', pattern: '**/*.mdp.json' },
  { scheme: 'file', pattern: '**/*.mdp.ts' },
];

let client: LanguageClient | undefined;
let outputChannel: vscode.OutputChannel | undefined;

export async function activate(context: vscode.ExtensionContext): Promise<void> {
  outputChannel = vscode.window.createOutputChannel('Episcope');
  context.subscriptions.push(outputChannel);
  const status = new StatusItem();
  context.subscriptions.push(status);

  const serverModule = context.asAbsolutePath('dist/server.js');
  const serverOptions: ServerOptions = {
    run: { module: serverModule, transport: TransportKind.ipc },
    debug: {
      module: serverModule,
      transport: TransportKind.ipc,
      options: { execArgv: ['--nolazy', '--inspect=6011'] },
    },
  };
  const clientOptions: LanguageClientOptions = {
    documentSelector: [...SPEC_SELECTOR, { scheme: 'file', pattern: '**/episcope.config.json' }],
    outputChannel,
    revealOutputChannelOn: RevealOutputChannelOn.Never,
    // Read at every (re)start, so a restart after the folder was trusted says so.
    initializationOptions: () => ({ trusted: vscode.workspace.isTrusted }),
    synchronize: {
      configurationSection: 'episcope',
      fileEvents: vscode.workspace.createFileSystemWatcher('**/episcope.config.json'),
    },
  };

  const start = async (): Promise<void> => {
    client = new LanguageClient('episcope', 'Episcope', serverOptions, clientOptions);
    client.onDidChangeState((event) => status.serverState(event.newState));
    await client.start();
    client.onNotification(STATUS_NOTIFICATION, (params: StatusParams) => status.update(params));
  };

  context.subscriptions.push(
    vscode.commands.registerCommand('episcope.restartServer', async () => {
      if (client) await client.stop().catch(() => undefined);
      status.clear();
      await start();
      vscode.window.setStatusBarMessage('Episcope: language server restarted', 3000);
    }),
    vscode.commands.registerCommand('episcope.showOutput', () => outputChannel?.show(true)),
    vscode.commands.registerCommand('episcope.analyzeWorkspace', async () => {
      if (!client) return;
      const summary = await client.sendRequest<WorkspaceAnalysisSummary | null>('workspace/executeCommand', {
        command: COMMAND_ANALYZE_WORKSPACE,
        arguments: [],
      });
      if (!summary) return;
      const failed = summary.failed > 0 ? `; ${summary.failed} could not be analysed (see the output)` : '';
      void vscode.window.showInformationMessage(
        `Episcope analysed ${summary.files} spec file${summary.files === 1 ? '' : 's'}: ${severityCount(summary.errors, 'error')}, ${severityCount(summary.warnings, 'warning')}, ${severityCount(summary.infos, 'info')}${failed}. They are in the Problems panel.`,
      );
    }),
    vscode.workspace.onDidGrantWorkspaceTrust(() => {
      void client?.sendNotification(TRUST_NOTIFICATION, { trusted: true });
    }),
    vscode.window.onDidChangeActiveTextEditor((editor) => status.show(editor?.document.uri.toString())),
  );

  await start();
  status.show(vscode.window.activeTextEditor?.document.uri.toString());
}

export async function deactivate(): Promise<void> {
  await client?.stop();
  client = undefined;
}

/** The language status item: what the analysis of the active spec is doing, and its size and time. */
class StatusItem implements vscode.Disposable {
  private readonly item = vscode.languages.createLanguageStatusItem('episcope.status', SPEC_SELECTOR);
  private readonly byUri = new Map<string, StatusParams>();

  constructor() {
    this.item.name = 'Episcope';
    this.item.text = 'Episcope';
    this.item.command = { title: 'Show output', command: 'episcope.showOutput' };
    if (!vscode.workspace.isTrusted) this.item.detail = 'restricted mode: model code does not run';
  }

  update(params: StatusParams): void {
    this.byUri.set(params.uri, params);
    if (vscode.window.activeTextEditor?.document.uri.toString() === params.uri) this.show(params.uri);
  }

  show(uri: string | undefined): void {
    const params = uri ? this.byUri.get(uri) : undefined;
    this.item.busy = params?.state === 'analysing';
    this.item.severity =
      params?.state === 'failed' ? vscode.LanguageStatusSeverity.Error : vscode.LanguageStatusSeverity.Information;
    this.item.text = params?.state === 'off' ? 'Episcope (off)' : 'Episcope';
    const trust = vscode.workspace.isTrusted ? '' : ' · restricted mode: model code does not run';
    this.item.detail = (params?.text ?? '') + trust;
  }

  serverState(state: State): void {
    if (state === State.Stopped) {
      this.item.severity = vscode.LanguageStatusSeverity.Warning;
      this.item.detail = 'language server stopped';
    }
  }

  clear(): void {
    this.byUri.clear();
  }

  dispose(): void {
    this.item.dispose();
  }
}
