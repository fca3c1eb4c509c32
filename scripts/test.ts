// `npm test`: the whole suite in one run — type check, lint, production build (the browser test
// serves it), then every vitest test (unit, integration, bridge, pseudo-terminal, browser), then the
// integration tests again on PostgreSQL, then the fault suite (tests/faults: real server and bridge processes killed, unplugged, out of disk).
// Ends with one line `N passed, N failed` for the whole run.
import { spawnSync } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';

const bin = (name: string) => path.join(process.cwd(), 'node_modules', '.bin', name);
const env = { ...process.env, NEXT_TELEMETRY_DISABLED: '1' };
let passed = 0;
let failed = 0;
let skipped = 0;

function step(name: string, command: string, args: string[], extraEnv: Record<string, string> = {}) {
  console.log(`\n▶ ${name}: ${path.basename(command)} ${args.join(' ')}`);
  const result = spawnSync(command, args, { stdio: 'inherit', env: { ...env, ...extraEnv } });
  const ok = result.status === 0;
  console.log(`${ok ? '✔' : '✘'} ${name}`);
  return ok;
}

for (const [name, command, args] of [
  ['type check', bin('tsc'), ['--noEmit', '-p', '.']],
  ['lint', bin('eslint'), ['--max-warnings=0', '.']],
  ['production build', bin('next'), ['build']],
] as const) {
  if (step(name, command, [...args])) passed++;
  else failed++;
}

/** A vitest run whose counts join the whole run's (a failure outside any test counts as one). */
function vitestStep(name: string, args: string[], extraEnv: Record<string, string> = {}) {
  const summaryFile = path.join(fs.mkdtempSync(path.join(os.tmpdir(), 'benchwire-test-')), 'summary.json');
  const ok = step(name, bin('vitest'), ['run', ...args], { BENCHWIRE_TEST_SUMMARY: summaryFile, ...extraEnv });
  if (fs.existsSync(summaryFile)) {
    const counts = JSON.parse(fs.readFileSync(summaryFile, 'utf8')) as { passed: number; failed: number; skipped: number };
    passed += counts.passed;
    failed += counts.failed;
    skipped += counts.skipped;
    // vitest can fail without a failed test (e.g. an unhandled error between tests): count it.
    if (!ok && counts.failed === 0) failed++;
  } else if (!ok) {
    failed++;
  }
}

vitestStep('tests', process.argv.slice(2));
// Second pass: the integration tests against a real PostgreSQL server (server mode), when Debian's
// PostgreSQL is installed (.ci/run installs it). Lean on purpose: integration files only; the
// PGlite-only files (its data-dir lock, its fsync) are left out. Not run when only some tests were asked for.
const hasPostgres =
  fs.existsSync('/usr/lib/postgresql') &&
  fs.readdirSync('/usr/lib/postgresql').some((v) => fs.existsSync(path.join('/usr/lib/postgresql', v, 'bin', 'pg_ctl')));
if (process.argv.length <= 2) {
  if (hasPostgres) {
    vitestStep(
      'tests on PostgreSQL',
      ['tests/integration', '--exclude', 'tests/integration/store-lock.test.ts', '--exclude', 'tests/integration/durable-ack.test.ts'],
      { BENCHWIRE_TEST_POSTGRES: '1' },
    );
  } else {
    console.log('\n▶ tests on PostgreSQL: skipped (no /usr/lib/postgresql/*/bin/pg_ctl)');
  }
}

// The fault suite (real server and bridge processes, tests/faults): one scenario per test, each line
// "sent, stored, duplicates, lost" printed again here. Not run when only some tests were asked for.
if (process.argv.length <= 2) {
  const faultSummary = path.join(fs.mkdtempSync(path.join(os.tmpdir(), 'benchwire-faults-')), 'faults.txt');
  vitestStep('fault suite', ['--config', 'vitest.faults.config.ts'], { BENCHWIRE_FAULTS_SUMMARY: faultSummary });
  if (fs.existsSync(faultSummary)) process.stdout.write(`\n${fs.readFileSync(faultSummary, 'utf8')}`);
}

console.log(`\n${passed} passed, ${failed} failed${skipped ? `, ${skipped} skipped` : ''}`);
process.exit(failed === 0 ? 0 : 1);
