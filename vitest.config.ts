import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    // The editor tier drives a real VS Code and runs only from .ci/run (npm run test:e2e).
    exclude: ['test/e2e/**', 'node_modules/**'],
    testTimeout: 60_000,
    hookTimeout: 120_000,
  },
});
