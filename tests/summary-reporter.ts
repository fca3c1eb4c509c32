import fs from 'node:fs';
import type { Reporter, TestModule } from 'vitest/node';

/** Writes the run's counts where scripts/test.ts can add them to the whole run's closing line. */
export default class SummaryReporter implements Reporter {
  onTestRunEnd(testModules: ReadonlyArray<TestModule>) {
    let passed = 0;
    let failed = 0;
    let skipped = 0;
    for (const mod of testModules) {
      for (const test of mod.children.allTests()) {
        const state = test.result().state;
        if (state === 'passed') passed++;
        else if (state === 'failed') failed++;
        else skipped++;
      }
      // A file that failed to load has no tests to count; count it as one failure.
      if (mod.state() === 'failed' && [...mod.children.allTests()].length === 0) failed++;
    }
    const out = process.env.BENCHWIRE_TEST_SUMMARY;
    if (out) fs.writeFileSync(out, JSON.stringify({ passed, failed, skipped }));
  }
}
