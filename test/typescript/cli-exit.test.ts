/**
 * The built command run as its own process on a model with an endless loop. The in-process CLI tests
 * cannot see this: the finding was printed correctly, but the process never ended, because the
 * stopped model thread was left paused in the inspector and Node waits for it at exit (a CI job hang).
 * `npm test` builds dist/ first; run alone, this test rebuilds dist/ when a source file is newer.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, readdirSync, statSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { beforeAll, describe, expect, test } from 'vitest';
import { REPO_ROOT, tempFolder } from '../cli/cli-harness';

const CLI = join(REPO_ROOT, 'dist', 'cli.js');
/** The bundles that take part in checking a TypeScript spec from the command line. */
const BUNDLES = ['cli.js', 'typescript-analysis.js', 'sandbox-worker.js'].map((name) => join(REPO_ROOT, 'dist', name));
/** The model's call limit (2 s) plus loading the TypeScript compiler leaves plenty of room below this. */
const EXIT_LIMIT_MS = 20_000;

function newestSource(folder: string): number {
  let newest = 0;
  for (const entry of readdirSync(folder, { withFileTypes: true })) {
    const path = join(folder, entry.name);
    newest = Math.max(newest, entry.isDirectory() ? newestSource(path) : statSync(path).mtimeMs);
  }
  return newest;
}

beforeAll(() => {
  const sources = newestSource(join(REPO_ROOT, 'server', 'src'));
  if (BUNDLES.some((bundle) => !existsSync(bundle) || statSync(bundle).mtimeMs < sources)) {
    execFileSync(process.execPath, [join(REPO_ROOT, 'scripts', 'bundle.mjs')], { cwd: REPO_ROOT });
  }
});

describe('dist/cli.js on a TypeScript model whose dynamics never return', () => {
  const folder = tempFolder('spinner');
  const spec = join(folder, 'spinner.mdp.ts');
  writeFileSync(
    spec,
    `export default { discount: 0.9, start: 0, actions: () => ['spin'], outcomes(s) {\n  while (true) {}\n} };\n`,
  );

  for (const format of ['text', 'json']) {
    test(`prints the model-error and exits with status 1 within ${EXIT_LIMIT_MS / 1000} s (--format ${format})`, () => {
      const began = Date.now();
      const result = spawnSync(process.execPath, [CLI, 'check', spec, '--format', format], {
        cwd: folder,
        encoding: 'utf8',
        timeout: EXIT_LIMIT_MS,
        killSignal: 'SIGKILL',
        env: { ...process.env, NO_COLOR: '1' },
      });
      const seconds = (Date.now() - began) / 1000;
      expect(result.signal, `killed after ${seconds} s: the process did not exit by itself`).toBeNull();
      expect(result.status).toBe(1);
      expect(result.stderr).toBe('');
      if (format === 'json') {
        const findings = JSON.parse(result.stdout).files[0].findings;
        expect(findings.map((f: { rule: string; line: number }) => [f.rule, f.line])).toEqual([['model-error', 2]]);
      } else {
        expect(result.stdout).toContain(
          'spinner.mdp.ts:2:3 error model-error outcomes(0, "spin") did not return within 2000 ms',
        );
      }
    });
  }
});
