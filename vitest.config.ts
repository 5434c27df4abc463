import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    // The editor tier drives a real VS Code and runs only from .ci/run (npm run test:e2e).
    exclude: ['test/e2e/**', 'node_modules/**'],
    // One fast-check seed for the whole suite (EPISCOPE_PROPERTY_SEED=random explores).
    setupFiles: ['test/setup/property-seed.ts'],
    testTimeout: 60_000,
    hookTimeout: 120_000,
  },
});
