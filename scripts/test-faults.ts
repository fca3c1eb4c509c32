// `npm run test:faults`: the fault suite alone (tests/faults, vitest.faults.config.ts) on a current
// production build. FAULTS_SCALE=0.2 for a quick local run; CI runs the counts (scale 1).
import { spawnSync } from 'node:child_process';
import path from 'node:path';
import { buildIfNeeded } from './build-if-needed';

buildIfNeeded(process.env, '[faults]');
const vitest = path.join(process.cwd(), 'node_modules', '.bin', 'vitest');
const result = spawnSync(vitest, ['run', '--config', 'vitest.faults.config.ts', ...process.argv.slice(2)], { stdio: 'inherit' });
process.exit(result.status ?? 1);
