/**
 * Runs the extension-host suite (test/vscode/suite) in a desktop VS Code that is already installed:
 * `VSCODE_EXECUTABLE_PATH=/path/to/code npm run test:vscode`. Nothing is downloaded. The extension
 * is loaded from this checkout (--extensionDevelopmentPath), with a copy of examples/ as the
 * workspace and a fresh user-data and extensions folder, so no other extension or setting interferes.
 */
import { cpSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { runTests } from '@vscode/test-electron';

const repoRoot = resolve(__dirname, '..', '..');

async function main(): Promise<number> {
  const vscodeExecutablePath = process.env.VSCODE_EXECUTABLE_PATH;
  if (!vscodeExecutablePath) {
    console.error(
      'Set VSCODE_EXECUTABLE_PATH to a desktop VS Code binary (for example /usr/share/code/code,\n' +
        '"/Applications/Visual Studio Code.app/Contents/MacOS/Electron" or "%LOCALAPPDATA%\\Programs\\Microsoft VS Code\\Code.exe").\n' +
        'This entry never downloads VS Code; machines without one run the code-server tier: npm run test:e2e.',
    );
    return 2;
  }
  const root = mkdtempSync(join(tmpdir(), 'episcope-vscode-test-'));
  cpSync(join(repoRoot, 'examples'), join(root, 'examples'), { recursive: true });
  cpSync(join(repoRoot, 'schemas'), join(root, 'schemas'), { recursive: true });
  try {
    await runTests({
      vscodeExecutablePath,
      extensionDevelopmentPath: repoRoot,
      extensionTestsPath: join(repoRoot, 'dist', 'test-vscode', 'suite.js'),
      extensionTestsEnv: { EPISCOPE_CLI: join(repoRoot, 'dist', 'cli.js') },
      launchArgs: [
        join(root, 'examples'),
        '--user-data-dir',
        join(root, 'user-data'),
        '--extensions-dir',
        join(root, 'extensions'),
        '--disable-extensions',
        // The suite checks a trusted folder; the untrusted case is covered by the code-server tier.
        '--disable-workspace-trust',
        '--skip-welcome',
        '--skip-release-notes',
      ],
    });
    return 0;
  } catch (error) {
    console.error(error instanceof Error ? error.message : error);
    return 1;
  } finally {
    rmSync(root, { recursive: true, force: true });
  }
}

main().then(
  (code) => process.exit(code),
  (error: unknown) => {
    console.error(error);
    process.exit(1);
  },
);
