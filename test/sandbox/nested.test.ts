import { buildSync, type BuildOptions } from 'esbuild';
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { Worker } from 'node:worker_threads';
import { describe, expect, test } from 'vitest';
import { TEST_CALL_TIMEOUT_MS } from '../typescript/ts-specs';

const root = join(__dirname, '..', '..');

/**
 * The language server analyses in a worker thread, so the sandbox worker is then nested. The
 * endless-loop location must work there too (the inspector is reached through the main thread).
 */
describe('the sandbox started from a worker thread', () => {
  test('an endless loop is still located at its line', async () => {
    // Inside node_modules/.cache so that the bundles can require esbuild (a real dependency, kept external).
    const cache = join(root, 'node_modules', '.cache');
    mkdirSync(cache, { recursive: true });
    const out = mkdtempSync(join(cache, 'episcope-nested-'));
    const common: BuildOptions = {
      bundle: true,
      platform: 'node',
      format: 'cjs',
      target: 'node20',
      external: ['esbuild'],
      mainFields: ['module', 'main'],
      logLevel: 'silent',
    };
    buildSync({
      ...common,
      entryPoints: [join(root, 'server/src/analyze.ts')],
      outfile: join(out, 'typescript-analysis.js'),
    });
    buildSync({
      ...common,
      entryPoints: [join(root, 'server/src/sandbox/worker.ts')],
      outfile: join(out, 'sandbox-worker.js'),
    });
    const specPath = join(out, 'spin.mdp.ts');
    const text = `export default { discount: 0.9, start: 0, actions: () => ['a'], outcomes(s) {\n  let i = 0;\n  while (true) { i++; }\n} };\n`;
    writeFileSync(specPath, text);
    const lines = await new Promise<unknown>((resolve, reject) => {
      const worker = new Worker(
        `const { parentPort, workerData } = require('node:worker_threads');
         const { analyzeFile } = require(workerData.module);
         const config = { rules: {}, thresholds: { 'model-error.callTimeoutMs': workerData.callTimeoutMs }, ignore: [], stateCap: 100, rollouts: 0, seed: 1, precision: 1e-6 };
         analyzeFile(workerData.path, workerData.text, { config }).then((r) =>
           parentPort.postMessage(r.findings.map((f) => [f.rule, r.lines.position(f.span.start).line + 1])));`,
        {
          eval: true,
          workerData: {
            module: join(out, 'typescript-analysis.js'),
            path: specPath,
            text,
            callTimeoutMs: TEST_CALL_TIMEOUT_MS,
          },
        },
      );
      worker.once('message', (message) => {
        resolve(message);
        void worker.terminate();
      });
      worker.once('error', reject);
    });
    rmSync(out, { recursive: true, force: true });
    expect(lines).toEqual([['model-error', 3]]);
  });
});
