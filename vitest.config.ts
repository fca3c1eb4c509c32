import path from 'node:path';
import { defineConfig } from 'vitest/config';

// BENCHWIRE_TEST_POSTGRES=1: the integration tests against a real PostgreSQL server (npm test's second pass).
const postgresPass = process.env.BENCHWIRE_TEST_POSTGRES === '1';

export default defineConfig({
  resolve: {
    alias: {
      '@': path.resolve(import.meta.dirname),
      // Tests run server code directly; the real guard only makes sense inside Next's build.
      'server-only': path.resolve(import.meta.dirname, 'lib/server-only-shim.ts'),
    },
  },
  test: {
    include: ['tests/unit/**/*.test.ts', 'tests/integration/**/*.test.ts', 'tests/e2e/**/*.test.ts', 'bridge/**/*.test.ts'],
    environment: 'node',
    ...(postgresPass ? { globalSetup: ['tests/helpers/postgres-setup.ts'] } : {}),
    testTimeout: 30_000,
    hookTimeout: 180_000,
    // PGlite and the browser are heavy; two cores, two workers.
    maxWorkers: 2,
    reporters: ['default', './tests/summary-reporter.ts'],
    // `npm run bench`: speed and memory are measured here, never asserted in tests.
    benchmark: { include: ['tests/bench/**/*.bench.ts'] },
  },
});
