/**
 * The built command (dist/cli.js) run as a separate process, as users and CI run it.
 * `npm test` builds dist/ first; run alone, this test builds it when it is missing.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, readFileSync, statSync } from 'node:fs';
import * as path from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { REPO_ROOT, expectContract } from './cli-harness';

const CLI = path.join(REPO_ROOT, 'dist', 'cli.js');

function run(args: string[]) {
  const result = spawnSync(process.execPath, [CLI, ...args], {
    cwd: REPO_ROOT,
    encoding: 'utf8',
    env: { ...process.env, NO_COLOR: '1' },
  });
  return { code: result.status, stdout: result.stdout, stderr: result.stderr };
}

beforeAll(() => {
  if (!existsSync(CLI))
    execFileSync(process.execPath, [path.join(REPO_ROOT, 'scripts', 'bundle.mjs')], { cwd: REPO_ROOT });
});

describe('dist/cli.js', () => {
  it('starts with a shebang, as the package bin must', () => {
    expect(readFileSync(CLI, 'utf8').split('\n')[0]).toBe('#!/usr/bin/env node');
    const pkg = JSON.parse(readFileSync(path.join(REPO_ROOT, 'package.json'), 'utf8'));
    expect(pkg.bin.episcope).toBe('dist/cli.js');
  });

  it('is executable and runs by itself (npx and bin links exec it directly, not through node)', () => {
    expect(statSync(CLI).mode & 0o111).toBe(0o111);
    const result = spawnSync(CLI, ['--version'], { cwd: REPO_ROOT, encoding: 'utf8' });
    expect(result.error).toBeUndefined();
    expect(result.status).toBe(0);
    expect(result.stdout).toMatch(/^\d+\.\d+\.\d+/);
  });

  it('checks the examples: exit 1 and the JSON contract on stdout', () => {
    const result = run(['check', 'examples', '--format', 'json', '--values']);
    expect(result.stderr).toBe('');
    expect(result.code).toBe(1);
    expectContract(JSON.parse(result.stdout), true);
  });

  it('exits 2 with one line for an unreadable path', () => {
    const result = run(['check', 'does-not-exist']);
    expect(result.code).toBe(2);
    expect(result.stdout).toBe('');
    expect(result.stderr).toBe("episcope: cannot read 'does-not-exist': no such file or folder\n");
  });

  it('exits 0 with --fail-on never and prints the version', () => {
    expect(run(['check', 'examples', '--fail-on', 'never']).code).toBe(0);
    const pkg = JSON.parse(readFileSync(path.join(REPO_ROOT, 'package.json'), 'utf8'));
    expect(run(['--version']).stdout).toBe(`${pkg.version}\n`);
  });
});
