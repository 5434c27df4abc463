// Bundles every entry point with esbuild into dist/. Type-checking is separate (`npm run typecheck`).
import { build } from 'esbuild';

/** Each entry: source, output name, and whether it runs as a script with a shebang. */
const entries = [
  { in: 'server/src/cli/main.ts', out: 'cli', shebang: true },
];

const common = {
  bundle: true,
  platform: 'node',
  target: 'node20',
  format: 'cjs',
  sourcemap: 'linked',
  logLevel: 'warning',
  // VS Code provides `vscode`; esbuild is a native-binary package that must stay a real dependency.
  external: ['vscode', 'esbuild'],
  // Prefer ES module builds: jsonc-parser's UMD build requires its parts dynamically, which a bundle cannot resolve.
  mainFields: ['module', 'main'],
};

await Promise.all(
  entries.map((entry) =>
    build({
      ...common,
      entryPoints: [entry.in],
      outfile: `dist/${entry.out}.js`,
      banner: entry.shebang ? { js: '#!/usr/bin/env node' } : undefined,
    }),
  ),
);
