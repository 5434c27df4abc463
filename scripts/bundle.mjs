// Bundles every entry point with esbuild into dist/. Type-checking is separate (`npm run typecheck`).
import { build } from 'esbuild';
import { chmodSync } from 'node:fs';
import { createRequire } from 'node:module';

/** Each entry: source, output name, and whether it runs as a script with a shebang. */
const entries = [
  { in: 'server/src/cli/main.ts', out: 'cli', shebang: true, lazyTypeScript: true },
  // The language server (started by the VS Code client), its analysis worker, and the VS Code client.
  { in: 'server/src/lsp/standalone.ts', out: 'server' },
  { in: 'server/src/lsp/worker.ts', out: 'analysis-worker', lazyTypeScript: true },
  { in: 'client/src/extension.ts', out: 'client' },
  // The TypeScript-spec pipeline (ts-morph, the sandbox host) as its own file, loaded on first use by bundles marked lazyTypeScript.
  { in: 'server/src/sandbox/analyze-typescript.ts', out: 'typescript-analysis' },
  // The sandbox worker that runs TypeScript model code (found next to the bundle that starts it).
  { in: 'server/src/sandbox/worker.ts', out: 'sandbox-worker' },
  // `npm run bench`: the benchmark runner (scripts/bench/*.ts sections).
  { in: 'scripts/bench.ts', out: 'bench' },
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

/**
 * Leaves the TypeScript pipeline (imported dynamically by analyze.ts) out of a bundle and loads
 * dist/typescript-analysis.js instead: the TypeScript compiler is 15 MB of JavaScript that takes over
 * a second to parse, which a worker analysing JSON specs should not pay at every start.
 */
const lazyTypeScript = {
  name: 'lazy-typescript',
  setup(pluginBuild) {
    pluginBuild.onResolve({ filter: /\/sandbox\/analyze-typescript$/ }, (args) =>
      args.kind === 'dynamic-import' ? { path: './typescript-analysis.js', external: true } : undefined,
    );
  },
};

await Promise.all(
  entries.map((entry) =>
    build({
      ...common,
      entryPoints: [entry.in],
      outfile: `dist/${entry.out}.js`,
      banner: entry.shebang ? { js: '#!/usr/bin/env node' } : undefined,
      plugins: entry.lazyTypeScript ? [lazyTypeScript] : [],
    }).then(() => {
      // A script run through the package bin must be executable: npx and npm's bin links run it
      // directly, and esbuild writes a fresh file without the execute bits on every build.
      if (entry.shebang) chmodSync(`dist/${entry.out}.js`, 0o755);
    }),
  ),
);

// Rule pages (dist/docs/rules/<id>.md), linked from editor diagnostics; generated from the registry so they never go stale.
const ruleDocs = await build({
  ...common,
  entryPoints: ['server/src/lsp/rule-docs.ts'],
  write: false,
  outfile: 'rule-docs.js',
  sourcemap: false,
});
const ruleDocsModule = { exports: {} };
new Function('module', 'exports', 'require', ruleDocs.outputFiles[0].text)(
  ruleDocsModule,
  ruleDocsModule.exports,
  createRequire(import.meta.url),
);
ruleDocsModule.exports.writeRuleDocs('dist/docs/rules');

// The package's types entry (package.json "types"): declarations of the authoring API, defineMdp.
const { default: ts } = await import('typescript');
ts.createProgram(['server/src/define.ts'], {
  declaration: true,
  emitDeclarationOnly: true,
  outDir: 'dist/types',
  strict: true,
  target: ts.ScriptTarget.ES2022,
  module: ts.ModuleKind.ESNext,
  types: [],
  skipLibCheck: true,
}).emit();
