import { defineConfig } from 'vitest/config';

// The editor tier: a real VS Code (code-server) driven by Chromium. Run with `npm run test:e2e`
// after `scripts/e2e-install.sh`; the default `vitest run` excludes this folder.
export default defineConfig({
  test: {
    root: new URL('../..', import.meta.url).pathname,
    include: ['test/e2e/**/*.e2e.test.ts'],
    fileParallelism: false,
    testTimeout: 180_000,
    hookTimeout: 300_000,
    reporters: ['verbose'],
  },
});
