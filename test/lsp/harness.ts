/**
 * A minimal LSP client for the protocol tests: starts the built server (dist/server.js, or
 * `dist/cli.js server`) as a child process, talks JSON-RPC to it over stdio with
 * vscode-languageserver-protocol, answers the requests a server sends its client, and records the
 * notifications it sends (diagnostics, status, progress, log messages).
 */
import { execFileSync, spawn, type ChildProcessWithoutNullStreams } from 'node:child_process';
import { existsSync, readdirSync, statSync } from 'node:fs';
import { join, resolve } from 'node:path';
import {
  createProtocolConnection,
  StreamMessageReader,
  StreamMessageWriter,
  type ClientCapabilities,
  type InitializeResult,
  type ProtocolConnection,
  type PublishDiagnosticsParams,
} from 'vscode-languageserver-protocol/node';
import type { StatusParams } from '../../server/src/lsp/protocol';

export const ROOT = resolve(__dirname, '..', '..');
export const DIST = join(ROOT, 'dist');

/** Bundles dist/ when it is missing or older than any source it is built from. */
export function ensureBuilt(): void {
  const outputs = ['server.js', 'analysis-worker.js', 'cli.js', 'docs/rules/README.md'].map((f) => join(DIST, f));
  const built = Math.min(...outputs.map((f) => (existsSync(f) ? statSync(f).mtimeMs : 0)));
  const newest = Math.max(
    ...['server/src', 'client/src', 'schemas'].map((d) => newestMtime(join(ROOT, d))),
    statSync(join(ROOT, 'scripts/bundle.mjs')).mtimeMs,
  );
  if (built < newest) execFileSync(process.execPath, ['scripts/bundle.mjs'], { cwd: ROOT, stdio: 'inherit' });
}

function newestMtime(folder: string): number {
  let newest = 0;
  for (const entry of readdirSync(folder, { withFileTypes: true })) {
    const path = join(folder, entry.name);
    newest = Math.max(newest, entry.isDirectory() ? newestMtime(path) : statSync(path).mtimeMs);
  }
  return newest;
}

export interface ClientOptions {
  /** Offer pull diagnostics (textDocument/diagnostic) or rely on push. */
  pull: boolean;
  /** Settings returned for workspace/configuration (section "episcope"). */
  settings?: Record<string, unknown>;
  initializationOptions?: Record<string, unknown>;
  workspaceFolder?: string;
  /** Start `dist/cli.js server --stdio` instead of `dist/server.js --stdio`. */
  viaCli?: boolean;
  extraArgs?: string[];
  /** The folder holding the bundles (default: the repository's dist/). */
  dist?: string;
}

export class TestClient {
  readonly connection: ProtocolConnection;
  readonly process: ChildProcessWithoutNullStreams;
  readonly diagnostics: PublishDiagnosticsParams[] = [];
  readonly statuses: StatusParams[] = [];
  readonly logs: string[] = [];
  readonly progressTokens: unknown[] = [];
  readonly shownDocuments: unknown[] = [];
  settings: Record<string, unknown>;
  stderr = '';
  private listeners: Array<() => void> = [];

  constructor(readonly options: ClientOptions) {
    this.settings = options.settings ?? {};
    const dist = options.dist ?? DIST;
    const args = options.viaCli ? [join(dist, 'cli.js'), 'server', '--stdio'] : [join(dist, 'server.js'), '--stdio'];
    this.process = spawn(process.execPath, [...args, ...(options.extraArgs ?? [])], { cwd: join(dist, '..') });
    this.process.stderr.on('data', (chunk: Buffer) => (this.stderr += chunk.toString()));
    this.connection = createProtocolConnection(
      new StreamMessageReader(this.process.stdout),
      new StreamMessageWriter(this.process.stdin),
    );
    this.connection.onNotification('textDocument/publishDiagnostics', (params: PublishDiagnosticsParams) => {
      this.diagnostics.push(params);
      this.changed();
    });
    this.connection.onNotification('episcope/status', (params: StatusParams) => {
      this.statuses.push(params);
      this.changed();
    });
    this.connection.onNotification('window/logMessage', (params: { message: string }) => {
      this.logs.push(params.message);
      this.changed();
    });
    this.connection.onNotification('$/progress', () => undefined);
    this.connection.onRequest('workspace/configuration', (params: { items: unknown[] }) =>
      params.items.map(() => this.settings),
    );
    this.connection.onRequest('client/registerCapability', () => null);
    this.connection.onRequest('window/workDoneProgress/create', (params: { token: unknown }) => {
      this.progressTokens.push(params.token);
      this.changed();
      return null;
    });
    this.connection.onRequest('workspace/diagnostic/refresh', () => null);
    this.connection.onRequest('workspace/codeLens/refresh', () => null);
    this.connection.onRequest('window/showDocument', (params: unknown) => {
      this.shownDocuments.push(params);
      this.changed();
      return { success: true };
    });
    this.connection.listen();
  }

  async initialize(): Promise<InitializeResult> {
    const capabilities: ClientCapabilities = {
      workspace: {
        configuration: true,
        didChangeConfiguration: { dynamicRegistration: true },
        didChangeWatchedFiles: { dynamicRegistration: true },
        workspaceEdit: { documentChanges: true, resourceOperations: ['create'] },
        diagnostics: this.options.pull ? { refreshSupport: true } : undefined,
        codeLens: { refreshSupport: true },
      },
      textDocument: {
        synchronization: { dynamicRegistration: false },
        hover: { contentFormat: ['markdown'] },
        codeAction: { codeActionLiteralSupport: { codeActionKind: { valueSet: ['quickfix'] } } },
        publishDiagnostics: {
          relatedInformation: true,
          versionSupport: true,
          codeDescriptionSupport: true,
          dataSupport: true,
        },
        diagnostic: this.options.pull ? { dynamicRegistration: false, relatedDocumentSupport: false } : undefined,
      },
      window: { workDoneProgress: true, showDocument: { support: true } },
    };
    const folder = this.options.workspaceFolder;
    const result = await this.connection.sendRequest<InitializeResult>('initialize', {
      processId: process.pid,
      rootUri: folder ? pathUri(folder) : null,
      workspaceFolders: folder ? [{ uri: pathUri(folder), name: 'test' }] : null,
      capabilities,
      initializationOptions: this.options.initializationOptions,
    });
    await this.connection.sendNotification('initialized', {});
    return result;
  }

  open(uri: string, text: string, version = 1): Promise<void> {
    return this.connection.sendNotification('textDocument/didOpen', {
      textDocument: { uri, languageId: 'json', version, text },
    });
  }

  /** Replaces the whole text (one incremental change covering everything). */
  replace(uri: string, oldText: string, newText: string, version: number): Promise<void> {
    const end = positionAt(oldText, oldText.length);
    return this.change(uri, version, [{ range: { start: { line: 0, character: 0 }, end }, text: newText }]);
  }

  change(uri: string, version: number, contentChanges: unknown[]): Promise<void> {
    return this.connection.sendNotification('textDocument/didChange', {
      textDocument: { uri, version },
      contentChanges,
    });
  }

  /** Resolves once `predicate` holds for what the server has sent (checked after every notification). */
  waitFor<T>(predicate: () => T | undefined | false, what: string, timeoutMs = 30_000): Promise<T> {
    return new Promise((resolvePromise, reject) => {
      const check = (): boolean => {
        const value = predicate();
        if (value) {
          clearTimeout(timer);
          this.listeners = this.listeners.filter((l) => l !== check);
          resolvePromise(value);
          return true;
        }
        return false;
      };
      const timer = setTimeout(() => {
        this.listeners = this.listeners.filter((l) => l !== check);
        reject(
          new Error(
            `timed out waiting for ${what}; server stderr: ${this.stderr.slice(-2000)}; logs: ${this.logs.slice(-10).join(' | ')}`,
          ),
        );
      }, timeoutMs);
      this.listeners.push(check);
      check();
    });
  }

  /** The first push of diagnostics for `uri` at `version` (after the push numbered `after`, if given). */
  pushed(uri: string, version?: number, after = 0, timeoutMs?: number): Promise<PublishDiagnosticsParams> {
    return this.waitFor(
      () =>
        this.diagnostics.slice(after).find((d) => d.uri === uri && (version === undefined || d.version === version)),
      `diagnostics of ${uri}${version === undefined ? '' : ` v${version}`}`,
      timeoutMs,
    );
  }

  /** The number of pushes so far, to wait for the next one with `pushed(uri, version, mark)`. */
  mark(): number {
    return this.diagnostics.length;
  }

  /** Resolves when the server reports an analysis of `uri` as done (after the status numbered `after`). */
  analysed(uri: string, after = 0): Promise<StatusParams> {
    return this.waitFor(
      () => this.statuses.slice(after).find((s) => s.uri === uri && (s.state === 'done' || s.state === 'failed')),
      `analysis of ${uri}`,
    );
  }

  hover(
    uri: string,
    position: { line: number; character: number },
  ): Promise<{ contents: { value: string }; range?: unknown } | null> {
    return this.connection.sendRequest('textDocument/hover', { textDocument: { uri }, position });
  }

  async stop(): Promise<number | null> {
    if (this.process.exitCode !== null) return this.process.exitCode;
    const exited = new Promise<number | null>((r) => this.process.once('exit', (code) => r(code)));
    try {
      await this.connection.sendRequest('shutdown');
      await this.connection.sendNotification('exit');
    } catch {
      this.process.kill();
    }
    const code = await exited;
    this.connection.dispose();
    return code;
  }

  private changed(): void {
    for (const listener of [...this.listeners]) listener();
  }
}

export function pathUri(path: string): string {
  return new URL(`file://${path}`).href;
}

export function positionAt(text: string, offset: number): { line: number; character: number } {
  const before = text.slice(0, offset);
  const line = before.split('\n').length - 1;
  return { line, character: offset - (before.lastIndexOf('\n') + 1) };
}

/** The position of the n-th (0-based) occurrence of `needle`, plus `shift` characters. */
export function positionOf(
  text: string,
  needle: string,
  occurrence = 0,
  shift = 1,
): { line: number; character: number } {
  let index = -1;
  for (let i = 0; i <= occurrence; i++) {
    index = text.indexOf(needle, index + 1);
    if (index < 0) throw new Error(`"${needle}" occurs fewer than ${occurrence + 1} times`);
  }
  return positionAt(text, index + shift);
}

export function offsetAt(text: string, position: { line: number; character: number }): number {
  let offset = 0;
  for (let line = 0; line < position.line; line++) {
    const next = text.indexOf('\n', offset);
    if (next < 0) return text.length;
    offset = next + 1;
  }
  return Math.min(offset + position.character, text.length);
}

export interface LspTextEdit {
  range: { start: { line: number; character: number }; end: { line: number; character: number } };
  newText: string;
}

/** Applies text edits (as an editor does: all ranges refer to the text before any edit). */
export function applyTextEdits(text: string, edits: readonly LspTextEdit[]): string {
  const located = edits.map((e) => ({
    start: offsetAt(text, e.range.start),
    end: offsetAt(text, e.range.end),
    newText: e.newText,
  }));
  located.sort((a, b) => b.start - a.start || b.end - a.end);
  let out = text;
  for (const e of located) out = out.slice(0, e.start) + e.newText + out.slice(e.end);
  return out;
}
