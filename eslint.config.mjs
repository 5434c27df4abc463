// Lint (npm run lint, part of npm test): typescript-eslint, type-aware, flat config. Formatting is
// the formatter's job (npm run format), so no rule here is about layout or line length.
import tseslint from 'typescript-eslint';

/** The analysis core: text and config in, a report out (DEVELOPERS.md, Invariants). */
const CORE = [
  'server/src/load/**/*.ts',
  'server/src/model/**/*.ts',
  'server/src/analysis/**/*.ts',
  'server/src/rules/**/*.ts',
  'server/src/sandbox/**/*.ts',
  'server/src/analyze.ts',
  'server/src/config.ts',
  'server/src/config-file.ts',
  'server/src/suppress.ts',
  'server/src/findings.ts',
  'server/src/report.ts',
  'server/src/define.ts',
];

/** What the core must never import: the fronts and the editor APIs. */
const FRONTS = {
  paths: [
    { name: 'vscode', message: 'The analysis core never imports the editor API (DEVELOPERS.md, Invariants).' },
    {
      name: 'vscode-languageserver',
      message: 'The analysis core never imports the LSP library; the language server (lsp/) adapts reports.',
    },
    { name: 'vscode-languageclient', message: 'The analysis core never imports the editor client.' },
  ],
  patterns: [
    {
      group: ['vscode-languageserver/*', 'vscode-languageserver-*', 'vscode-languageclient/*'],
      message: 'The analysis core never imports the LSP libraries.',
    },
    {
      group: ['**/lsp', '**/lsp/**'],
      message: 'The analysis core never imports the language server (lsp/): it is a front over analyzeFile.',
    },
    {
      group: ['**/cli', '**/cli/**'],
      message: 'The analysis core never imports the command line (cli/): it is a front over analyzeFile.',
    },
    { group: ['**/client/**'], message: 'The analysis core never imports the VS Code extension (client/).' },
  ],
};

export default tseslint.config(
  // The examples are users' specs (demo data), type-checked by their own tests, not by this project's tsconfig.
  { ignores: ['dist/**', 'node_modules/**', 'test-results/**', '.e2e-cache/**', 'examples/**', '**/*.mjs', '**/*.js'] },
  {
    files: ['**/*.ts'],
    languageOptions: {
      parser: tseslint.parser,
      parserOptions: { projectService: true, tsconfigRootDir: import.meta.dirname },
    },
    plugins: { '@typescript-eslint': tseslint.plugin },
    linterOptions: { reportUnusedDisableDirectives: 'error' },
    rules: {
      // A promise nobody awaits loses its rejection: an analysis error would vanish, or crash the process later.
      '@typescript-eslint/no-floating-promises': 'error',
      // An async callback where a plain one is expected (an event handler, forEach) is not awaited either.
      '@typescript-eslint/no-misused-promises': 'error',
      '@typescript-eslint/await-thenable': 'error',
      // Unused names are dead code or a forgotten use; a leading underscore marks a required but unused parameter.
      '@typescript-eslint/no-unused-vars': [
        'error',
        { argsIgnorePattern: '^_', varsIgnorePattern: '^_', caughtErrors: 'none', ignoreRestSiblings: true },
      ],
    },
  },
  {
    files: CORE,
    rules: { 'no-restricted-imports': ['error', FRONTS] },
  },
);
