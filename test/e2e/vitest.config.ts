import { defineConfig } from 'vitest/config';

// The editor tier: a real VS Code (code-server) driven by Chromium. Run with `npm run test:e2e`
// after `scripts/e2e-install.sh`; the default `vitest run` excludes this folder.
export default defineConfig({
  test: {
    root: new URL('../..', import.meta.url).pathname,
    // The HTML report's browser checks need the Chromium that scripts/e2e-install.sh installs; here
    // a missing browser is a failure, in the default run a visible skip.
    include: ['test/e2e/**/*.e2e.test.ts', 'test/gate/report-html.test.ts'],
    env: { EPISCOPE_BROWSER_REQUIRED: '1' },
    fileParallelism: false,
    testTimeout: 180_000,
    hookTimeout: 300_000,
    reporters: ['verbose'],
  },
});
