import { defineConfig } from 'vitest/config';
import { fileURLToPath } from 'node:url';

/**
 * One run for every test: unit tests of pure code, integration tests against the real
 * PostgreSQL, queue and web server, and browser tests in Debian's Chromium. `tests/run.sh`
 * prepares the throwaway database and environment; global-setup starts the stack.
 */
export default defineConfig({
  root: fileURLToPath(new URL('..', import.meta.url)),
  test: {
    include: ['tests/unit/**/*.test.ts', 'tests/integration/**/*.test.ts', 'tests/e2e/**/*.test.ts'],
    globalSetup: ['tests/support/global-setup.ts'],
    setupFiles: ['tests/support/database.ts'],
    testTimeout: 120_000,
    hookTimeout: 180_000,
    pool: 'forks',
    poolOptions: { forks: { maxForks: 2, minForks: 1 } },
    sequence: { hooks: 'list' },
  },
});
