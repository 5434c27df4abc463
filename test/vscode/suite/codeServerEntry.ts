/**
 * Runs the extension-host suite inside code-server, where no `--extensionTestsPath` runner exists:
 * a small extension (packaged by test/e2e/suiteRunner.ts) that activates in a folder holding the
 * marker file `.episcope-extension-host-suite`, runs the same checks as a desktop VS Code would,
 * and appends its report to the file named by EPISCOPE_SUITE_REPORT. This keeps the suite exercised by CI, which has no desktop VS Code.
 */
import { appendFileSync } from 'node:fs';
import './index';
import { runChecks } from './runner';

export async function activate(): Promise<void> {
  const report = process.env.EPISCOPE_SUITE_REPORT;
  if (!report) return;
  const log = (line: string) => appendFileSync(report, `${line}\n`);
  try {
    await runChecks(log);
    log('suite: done');
  } catch {
    log('suite: failed');
  }
}
