/**
 * Packages the extension-host suite (test/vscode/suite) as a tiny extension for code-server, which
 * has no `--extensionTestsPath` runner. It activates only in a folder holding SUITE_MARKER, runs
 * the suite there and appends its report to the file named by EPISCOPE_SUITE_REPORT.
 */
import { spawnSync } from 'node:child_process';
import { mkdirSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { join } from 'node:path';
import { build } from 'esbuild';
import { REPO_ROOT } from './codeServer';

export const SUITE_MARKER = '.episcope-extension-host-suite';

export async function packageSuiteRunner(dir: string): Promise<string> {
  mkdirSync(dir, { recursive: true });
  await build({
    entryPoints: [join(REPO_ROOT, 'test/vscode/suite/codeServerEntry.ts')],
    outfile: join(dir, 'extension.js'),
    bundle: true,
    platform: 'node',
    target: 'node20',
    format: 'cjs',
    logLevel: 'warning',
    external: ['vscode'],
  });
  const manifest = {
    name: 'episcope-extension-host-suite',
    displayName: 'Episcope extension-host suite (test only)',
    description: 'Runs test/vscode/suite inside code-server.',
    publisher: 'episcope-tests',
    version: '0.0.0',
    license: 'MIT',
    engines: { vscode: '^1.82.0' },
    main: './extension.js',
    activationEvents: [`workspaceContains:${SUITE_MARKER}`],
    extensionDependencies: ['episcope.episcope'],
  };
  writeFileSync(join(dir, 'package.json'), JSON.stringify(manifest, null, 2));
  const vsix = join(dir, 'extension-host-suite.vsix');
  const vsce = createRequire(join(REPO_ROOT, 'package.json')).resolve('@vscode/vsce/vsce');
  const result = spawnSync(
    process.execPath,
    [vsce, 'package', '--allow-missing-repository', '--skip-license', '--out', vsix],
    {
      cwd: dir,
      encoding: 'utf8',
      timeout: 120_000,
    },
  );
  if (result.status !== 0) throw new Error(`packaging the suite runner failed:\n${result.stdout}\n${result.stderr}`);
  return vsix;
}
