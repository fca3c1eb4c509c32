// Builds the web app when there is no build yet or a source file changed since the last one
// (npm start and npm run bench both need a current production build).
import { spawnSync } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';

const root = process.cwd();
const bin = (name: string) => path.join(root, 'node_modules', '.bin', name);

const SOURCES = ['app', 'lib', 'db', 'public', 'next.config.ts', 'package.json', 'postcss.config.mjs', 'tsconfig.json'];

function newestSourceTime(entry: string): number {
  const full = path.join(root, entry);
  if (!fs.existsSync(full)) return 0;
  const stat = fs.statSync(full);
  if (!stat.isDirectory()) return stat.mtimeMs;
  return Math.max(stat.mtimeMs, ...fs.readdirSync(full).map((name) => newestSourceTime(path.join(entry, name))));
}

/** Builds when there is no build yet or a source file changed since the last one. */
export function buildIfNeeded(env: NodeJS.ProcessEnv = process.env, tag = '[build]') {
  const buildId = path.join(root, '.next', 'BUILD_ID');
  const built = fs.existsSync(buildId) ? fs.statSync(buildId).mtimeMs : 0;
  if (built && Math.max(...SOURCES.map(newestSourceTime)) < built) return;
  console.log(`${tag} building the web app (first start or sources changed)…`);
  const result = spawnSync(bin('next'), ['build'], { stdio: 'inherit', env: { ...env, NEXT_TELEMETRY_DISABLED: '1' } });
  if (result.status !== 0) {
    console.error(`${tag} the build failed; see above.`);
    process.exit(result.status ?? 1);
  }
}

