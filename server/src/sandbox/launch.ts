/**
 * How the sandbox child is started: which `node`, with which permission flags, under which OS
 * memory limit, with which environment. Everything that cannot be had (no permission model on an
 * old Node or on Electron's, no `ulimit` on Windows) is returned as a notice the user sees.
 */
import { execFileSync } from 'node:child_process';
import { existsSync, statSync } from 'node:fs';
import { delimiter, join } from 'node:path';

export interface NodeBinary {
  path: string;
  major: number;
  /** Electron's own binary run as Node (ELECTRON_RUN_AS_NODE): no permission model. */
  electron: boolean;
}

export interface LaunchPlan {
  command: string;
  args: string[];
  env: Record<string, string>;
  /** What the boundary lacks on this machine, one sentence each. */
  notices: string[];
}

let cachedBinary: NodeBinary | undefined;

function versionOf(path: string): number | undefined {
  try {
    const text = execFileSync(path, ['--version'], {
      env: {},
      timeout: 10_000,
      encoding: 'utf8',
      stdio: ['ignore', 'pipe', 'ignore'],
    });
    const match = /^v(\d+)\./.exec(text.trim());
    return match ? Number(match[1]) : undefined;
  } catch {
    return undefined;
  }
}

/** A `node` executable on the search path `path`, or undefined. */
function nodeOnPath(path: string): NodeBinary | undefined {
  const names = process.platform === 'win32' ? ['node.exe'] : ['node'];
  for (const folder of path.split(delimiter)) {
    if (!folder) continue;
    for (const name of names) {
      const candidate = join(folder, name);
      try {
        if (!existsSync(candidate) || !statSync(candidate).isFile()) continue;
      } catch {
        continue;
      }
      const major = versionOf(candidate);
      if (major !== undefined) return { path: candidate, major, electron: false };
    }
  }
  return undefined;
}

/** What decides which Node runs model code: the host's own runtime and its search path. */
export interface HostRuntime {
  execPath: string;
  versions: { node: string; electron?: string };
  path: string;
}

/**
 * The Node that runs model code: the host's own when it is plain Node; inside Electron (VS Code's
 * extension host) a plain `node` from PATH, whose permission model Electron's build lacks; failing
 * that, Electron's binary run as Node.
 */
export function chooseSandboxNode(host: HostRuntime): NodeBinary {
  const own = { path: host.execPath, major: Number(host.versions.node.split('.')[0]) };
  if (!host.versions.electron) return { ...own, electron: false };
  return nodeOnPath(host.path) ?? { ...own, electron: true };
}

/** chooseSandboxNode for this process, decided once. */
export function sandboxNode(): NodeBinary {
  cachedBinary ??= chooseSandboxNode({
    execPath: process.execPath,
    versions: process.versions,
    path: process.env.PATH ?? '',
  });
  return cachedBinary;
}

/** The OS data-segment limit of the child, in MB: the heap, as much again for Buffers, and Node's own start-up share. */
export function processMemoryMb(heapMb: number): number {
  return 2 * heapMb + 256;
}

/**
 * The command that starts the child script under the permission model (reads only under
 * `readable`; no writes, child processes, workers or native addons), an empty environment, a heap
 * limit and, where `/bin/sh` has `ulimit`, a limit on the whole process's data segment.
 */
export function launchPlan(
  script: string,
  readable: string[],
  heapMb: number,
  node: NodeBinary = sandboxNode(),
): LaunchPlan {
  const notices: string[] = [];
  const nodeArgs = [`--max-old-space-size=${heapMb}`, '--no-warnings'];
  if (node.electron) {
    notices.push(
      "model code ran without Node's permission model: no plain `node` was found on PATH and Electron's Node lacks it, so the model could read and write files and start processes (install Node 20 or later to close this)",
    );
  } else if (node.major >= 20) {
    nodeArgs.push(node.major >= 22 ? '--permission' : '--experimental-permission');
    for (const path of readable) nodeArgs.push(`--allow-fs-read=${path}`);
  } else {
    notices.push(
      `model code ran without Node's permission model: ${node.path} is Node ${node.major}, which lacks it (Node 20 or later has it)`,
    );
  }
  nodeArgs.push(script);
  const env: Record<string, string> = node.electron ? { ELECTRON_RUN_AS_NODE: '1' } : {};
  if (process.platform !== 'win32' && existsSync('/bin/sh')) {
    const kb = processMemoryMb(heapMb) * 1024;
    // The only file the child can write is the host's column file (fd 5): no honest listing is larger than
    // the memory it was held in, so the same size (in 512-byte blocks) bounds what hostile code can put on disk.
    const blocks = kb * 2;
    // exec keeps the child's pid that of node itself, so that killing it kills the model.
    return {
      command: '/bin/sh',
      args: ['-c', `ulimit -d ${kb} && ulimit -f ${blocks} && exec "$0" "$@"`, node.path, ...nodeArgs],
      env,
      notices,
    };
  }
  notices.push(
    `model code ran without an OS memory limit (only the ${heapMb} MB heap limit applies): this system has no /bin/sh ulimit`,
  );
  return { command: node.path, args: nodeArgs, env, notices };
}
