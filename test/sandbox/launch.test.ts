/**
 * Which Node runs model code, and with which protections. Inside VS Code the host is Electron's
 * Node, whose build lacks the permission model; a plain `node` from PATH is used then, and when
 * there is none the fallback is said in a notice the user sees (never silent).
 */
import { chmodSync, mkdtempSync, symlinkSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { delimiter, join } from 'node:path';
import { describe, expect, test } from 'vitest';
import { chooseSandboxNode, launchPlan, type NodeBinary } from '../../server/src/sandbox/launch';

const ELECTRON_HOST = { execPath: '/opt/editor/electron', versions: { node: '20.18.1', electron: '32.2.1' } };
const NODE_MAJOR = Number(process.versions.node.split('.')[0]);

function folderWith(files: Record<string, (path: string) => void>): string {
  const folder = mkdtempSync(join(tmpdir(), 'episcope-launch-'));
  for (const [name, make] of Object.entries(files)) make(join(folder, name));
  return folder;
}

describe('the Node that runs model code', () => {
  test('a plain Node host runs it with its own binary', () => {
    expect(chooseSandboxNode({ execPath: '/usr/bin/node', versions: { node: '22.3.0' }, path: '' })).toEqual({
      path: '/usr/bin/node',
      major: 22,
      electron: false,
    });
  });

  test('an Electron host takes the first working node on PATH', () => {
    // A folder whose `node` is not Node (it prints no version), then one with the real binary.
    const fake = folderWith({
      node: (path) => {
        writeFileSync(path, '#!/bin/sh\necho "not a node"\n');
        chmodSync(path, 0o755);
      },
    });
    const empty = folderWith({});
    const real = folderWith({ node: (path) => symlinkSync(process.execPath, path) });
    const chosen = chooseSandboxNode({ ...ELECTRON_HOST, path: [empty, fake, real].join(delimiter) });
    expect(chosen).toEqual({ path: join(real, 'node'), major: NODE_MAJOR, electron: false });
  });

  test('an Electron host without a node on PATH falls back to Electron run as Node', () => {
    const empty = folderWith({});
    expect(chooseSandboxNode({ ...ELECTRON_HOST, path: empty })).toEqual({
      path: '/opt/editor/electron',
      major: 20,
      electron: true,
    });
  });
});

describe('the launch plan', () => {
  const readable = ['/work/specs', '/work/bundle/child.js'];

  test('plain Node 20: the permission model with reads under the given paths, an empty environment, an OS memory limit', () => {
    const node: NodeBinary = { path: '/usr/bin/node', major: 20, electron: false };
    const plan = launchPlan('/work/bundle/child.js', readable, 256, node);
    expect(plan.notices).toEqual([]);
    expect(plan.env).toEqual({});
    expect(plan.command).toBe('/bin/sh');
    // 2 x 256 MB heap + 256 MB start-up share, in KB; the column file gets as much, in 512-byte blocks.
    expect(plan.args[1]).toBe(`ulimit -d ${768 * 1024} && ulimit -f ${768 * 1024 * 2} && exec "$0" "$@"`);
    expect(plan.args.slice(2)).toEqual([
      '/usr/bin/node',
      '--max-old-space-size=256',
      '--no-warnings',
      '--experimental-permission',
      '--allow-fs-read=/work/specs',
      '--allow-fs-read=/work/bundle/child.js',
      '/work/bundle/child.js',
    ]);
  });

  test('Node 22 and later take the stable flag', () => {
    const plan = launchPlan('/b/child.js', ['/b'], 128, { path: '/usr/bin/node', major: 22, electron: false });
    expect(plan.args).toContain('--permission');
    expect(plan.args).not.toContain('--experimental-permission');
  });

  test('Electron run as Node: no permission flags, and a notice that says so', () => {
    const plan = launchPlan('/b/child.js', ['/b'], 128, { path: '/opt/editor/electron', major: 20, electron: true });
    expect(plan.env).toEqual({ ELECTRON_RUN_AS_NODE: '1' });
    expect(plan.args.some((arg) => arg.includes('permission') || arg.startsWith('--allow-fs'))).toBe(false);
    expect(plan.notices).toHaveLength(1);
    expect(plan.notices[0]).toMatch(/without Node's permission model.*no plain `node` was found on PATH/);
  });

  test('a Node older than 20: a notice names the binary and its version', () => {
    const plan = launchPlan('/b/child.js', ['/b'], 128, { path: '/opt/node18/bin/node', major: 18, electron: false });
    expect(plan.notices).toEqual([expect.stringContaining('/opt/node18/bin/node is Node 18')]);
  });
});
