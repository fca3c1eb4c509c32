import 'server-only';
import path from 'node:path';

// Where Benchwire keeps its database, secrets and captures on this machine. Git-ignored by default.
export function dataDir(): string {
  // turbopackIgnore: the data dir is runtime state, not something to trace into the build.
  return path.resolve(/*turbopackIgnore: true*/ process.env.DATA_DIR ?? path.join(process.cwd(), '.data'));
}

export const isProduction = () => process.env.NODE_ENV === 'production';

export const APP_VERSION = process.env.BENCHWIRE_VERSION ?? process.env.npm_package_version ?? '0.0.0';
