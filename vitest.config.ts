import { defineConfig } from 'vitest/config';

// Three projects: `unit` is the pure core (no broker, no Prometheus, no browser);
// `integration` gets real services from the global setup in test/harness/global-setup.ts (and Chromium
// from browser-setup.ts, for the live page against a real watcher);
// `e2e` opens pages in a real headless Chromium (test/harness/browser.ts), without a broker.
export default defineConfig({
  test: {
    projects: [
      {
        test: {
          name: 'unit',
          include: ['test/unit/**/*.test.ts'],
          environment: 'node',
        },
      },
      {
        test: {
          name: 'integration',
          include: ['test/integration/**/*.test.ts'],
          environment: 'node',
          globalSetup: ['test/harness/global-setup.ts', 'test/harness/browser-setup.ts'],
          testTimeout: 120_000,
          hookTimeout: 180_000,
          fileParallelism: false,
        },
      },
      {
        test: {
          name: 'e2e',
          include: ['test/e2e/**/*.test.ts'],
          environment: 'node',
          globalSetup: ['test/harness/browser-setup.ts'],
          testTimeout: 120_000,
          hookTimeout: 120_000,
          fileParallelism: false,
        },
      },
    ],
  },
});
