// An acknowledged batch is on disk (issue: "acknowledged means on disk"). The real route and a real
// PGlite data directory run in a child process under strace (Linux's system-call tracer), which shows
// the WAL's fsync between the commit's write and the answer. The first half checks the fact the design
// rests on: PGlite on its own writes the commit to the WAL file and never fsyncs it (read in its package
// source: PostgreSQL started with -F, and its Node file layer has no fsync), so the server must do it.
import { spawnSync } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';

const root = process.cwd();
const straceWorks = spawnSync('strace', ['-qq', '-e', 'trace=none', 'true']).status === 0;

interface Call {
  line: number;
  name: string;
  path: string;
  text: string;
}

/** strace -y lines: `pid name(fd</path>, …`; an unfinished call's first half names its fd too. */
function calls(trace: string): Call[] {
  return trace.split('\n').flatMap((text, line) => {
    const match = /^\d+\s+(\w+)\(\d+<([^>]*)>/.exec(text);
    return match ? [{ line, name: match[1], path: match[2], text }] : [];
  });
}

const between = (all: Call[], from: number, to: number) => all.filter((c) => c.line > from && c.line < to);
const markerLine = (all: Call[], marker: string) => {
  const found = all.find((c) => c.name === 'write' && c.text.includes(`"${marker}`));
  if (!found) throw new Error(`marker ${marker} not in the trace`);
  return found.line;
};

describe.skipIf(!straceWorks)('a bridge batch is answered only after its transaction is on disk', () => {
  it('fsyncs the WAL segment the commit was written to before the answer (PGlite alone would not)', () => {
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'benchwire-durable-'));
    const traceFile = path.join(dir, 'trace.txt');
    try {
      const child = spawnSync(
        'strace',
        ['-f', '-y', '-qq', '-e', 'trace=pwrite64,write,fsync,fdatasync', '-o', traceFile,
          path.join(root, 'node_modules', '.bin', 'tsx'), '--tsconfig', 'tsconfig.server.json', 'tests/helpers/durable-ack-child.ts', path.join(dir, 'data')],
        { cwd: root, encoding: 'utf8', timeout: 170_000 },
      );
      expect(child.status, child.stderr).toBe(0);
      expect(child.stdout).toMatch(/ANSWERED 200 .*"status":"created"/);
      const all = calls(fs.readFileSync(traceFile, 'utf8'));
      const isWal = (c: Call) => c.path.includes(`${path.sep}pg_wal${path.sep}`);
      const isSync = (c: Call) => c.name === 'fsync' || c.name === 'fdatasync';

      // PGlite by itself: the commit reaches the WAL file (pwrite64) and nothing is synced.
      const raw = between(all, markerLine(all, 'RAW-START'), markerLine(all, 'RAW-END'));
      expect(raw.some((c) => c.name === 'pwrite64' && isWal(c))).toBe(true);
      expect(raw.filter(isSync)).toEqual([]);

      // The batch: after its last WAL write, that same segment is fsynced, and only then is the answer written.
      const batch = between(all, markerLine(all, 'BATCH-START'), markerLine(all, 'ANSWERED'));
      const walWrites = batch.filter((c) => c.name === 'pwrite64' && isWal(c));
      expect(walWrites.length).toBeGreaterThan(0);
      const lastWrite = walWrites.at(-1)!;
      const synced = batch.filter((c) => isSync(c) && c.path === lastWrite.path && c.line > lastWrite.line);
      expect(synced.length, `no fsync of ${lastWrite.path} after its last write`).toBeGreaterThan(0);
    } finally {
      fs.rmSync(dir, { recursive: true, force: true });
    }
  }, 180_000);
});
