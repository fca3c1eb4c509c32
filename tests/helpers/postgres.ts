// A real PostgreSQL server for tests: Debian's binaries (/usr/lib/postgresql/<version>/bin), a fresh
// cluster on a temp dir and a free port, run as the `postgres` user when we are root (PostgreSQL refuses
// to run as root). Used by the PostgreSQL pass of the integration suite and the two-instance test.
import { execFileSync, spawnSync } from 'node:child_process';
import fs from 'node:fs';
import { freePort } from '@/bridge/testing/server';
import os from 'node:os';
import path from 'node:path';

/** The newest installed server's bin directory, or null when PostgreSQL is not installed. */
export function postgresBin(): string | null {
  const base = '/usr/lib/postgresql';
  if (!fs.existsSync(base)) return null;
  const versions = fs
    .readdirSync(base)
    .filter((v) => fs.existsSync(path.join(base, v, 'bin', 'pg_ctl')) && fs.existsSync(path.join(base, v, 'bin', 'initdb')))
    .sort((a, b) => Number(b) - Number(a));
  return versions.length ? path.join(base, versions[0], 'bin') : null;
}

export interface TestPostgres {
  /** Superuser URL of the maintenance database (`postgres`). */
  adminUrl: string;
  /** URL of another database on the same server. */
  urlFor(database: string): string;
  stop(): void;
}

export async function startPostgres(): Promise<TestPostgres> {
  const bin = postgresBin();
  if (!bin) throw new Error('PostgreSQL is not installed (no /usr/lib/postgresql/*/bin/pg_ctl)');
  const asRoot = process.getuid?.() === 0;
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'benchwire-pg-'));
  const data = path.join(dir, 'data');
  const port = await freePort();
  // As root: the cluster belongs to `postgres`; otherwise to whoever runs the tests.
  if (asRoot) execFileSync('chown', ['postgres:postgres', dir]);
  const run = (file: string, args: string[]) => {
    const command = asRoot ? 'runuser' : file;
    const argv = asRoot ? ['-u', 'postgres', '--', file, ...args] : args;
    const result = spawnSync(command, argv, { encoding: 'utf8', cwd: dir });
    if (result.status !== 0) throw new Error(`${path.basename(file)} failed: ${result.stderr || result.stdout}`);
  };
  run(path.join(bin, 'initdb'), ['-D', data, '-U', 'postgres', '--auth=trust', '--encoding=UTF8', '--locale=C.UTF-8']);
  // fsync stays on (the default): the server mode is tested as deployed. Sockets in the temp dir only.
  const options = `-p ${port} -c listen_addresses=127.0.0.1 -k ${dir} -c max_connections=300`;
  run(path.join(bin, 'pg_ctl'), ['-D', data, '-o', options, '-l', path.join(dir, 'server.log'), '-w', '-t', '120', 'start']);
  const urlFor = (database: string) => `postgres://postgres@127.0.0.1:${port}/${database}`;
  let stopped = false;
  return {
    adminUrl: urlFor('postgres'),
    urlFor,
    stop() {
      if (stopped) return;
      stopped = true;
      try {
        run(path.join(bin, 'pg_ctl'), ['-D', data, '-m', 'immediate', '-w', 'stop']);
      } finally {
        fs.rmSync(dir, { recursive: true, force: true });
      }
    },
  };
}
