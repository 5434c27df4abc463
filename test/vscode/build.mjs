// Bundles the extension-host suite and its launcher into dist/test-vscode/ (esbuild, CommonJS),
// after the extension itself (scripts/bundle.mjs), so `npm run test:vscode` needs no other step.
import { build } from 'esbuild';

await build({
  entryPoints: { suite: 'test/vscode/suite/index.ts', runTests: 'test/vscode/runTests.ts' },
  outdir: 'dist/test-vscode',
  bundle: true,
  platform: 'node',
  target: 'node20',
  format: 'cjs',
  sourcemap: 'linked',
  logLevel: 'warning',
  external: ['vscode', '@vscode/test-electron'],
});
