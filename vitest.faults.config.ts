import path from 'node:path';
import { defineConfig } from 'vitest/config';

// `npm run test:faults` (and a step of `npm test`): real server and bridge processes under faults,
// one scenario at a time (they kill processes and fill disks; two at once would only add noise).
export default defineConfig({
  resolve: {
    alias: {
      '@': path.resolve(import.meta.dirname),
      'server-only': path.resolve(import.meta.dirname, 'lib/server-only-shim.ts'),
    },
  },
  test: {
    include: ['tests/faults/**/*.test.ts'],
    globalSetup: ['tests/faults/global-setup.ts'],
    environment: 'node',
    fileParallelism: false,
    maxWorkers: 1,
    testTimeout: 600_000,
    hookTimeout: 300_000,
    reporters: ['default', './tests/summary-reporter.ts'],
  },
});
