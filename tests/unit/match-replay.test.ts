import { execFile } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { promisify } from 'node:util';
import { describe, expect, it } from 'vitest';

// `npm run --silent match -- replay FILE.json` on a fixture day. Each reading of the fixture is a worked
// case whose answer follows from the bench's physics (a CRP run gives its reading at start + 725 s: mixing,
// re-insertion, incubation and measurement, common practice, no published source; one run per reader):
//   r1  the only run, on the reader that sent it, on time                         → o1, confident
//   r2  two runs, no reader named, started 20 s apart; arrives at o2's due time     → o2 first, asked to choose
//   r3  the other of the two, the only one left                                     → o3, confident
//   r5  o4 on reader B is 40 min overdue (aborted, left open); o5 fresh on reader B → o5, confident
//   r7  the reading names patient p7; timing favours p6's run by 30 s               → o7 (ID decisive), confident
//   r6  p6's run, the only one left                                                 → o6, confident
//   r8  a cat's run (CRP is validated for dogs): ranked by timing all the same       → o8, confident
//   r9  no run open: nothing to suggest                                             → none, asked to choose
// So: 8 readings, all 8 best guesses kept, 0 confidently wrong, 2 asked to choose.

const run = promisify(execFile);
const root = path.resolve(import.meta.dirname, '../..');
const fixture = path.join(root, 'tests/fixtures/match-replay-day.json');
const replay = (file: string) =>
  run('npx', ['tsx', '--tsconfig', 'tsconfig.server.json', 'scripts/match.ts', 'replay', file], { cwd: root }).then(
    (r) => ({ code: 0, stdout: r.stdout, stderr: r.stderr }),
    (e: { code: number; stdout: string; stderr: string }) => ({ code: e.code, stdout: e.stdout, stderr: e.stderr }),
  );

describe('match replay', () => {
  it('prints one line per reading in arrival order, then the summary scored against what was kept', async () => {
    const { code, stdout } = await replay(fixture);
    expect(code).toBe(0);
    const lines = stdout.trim().split('\n').map((l) => JSON.parse(l));
    expect(lines.at(-1)).toEqual({ summary: { readings: 8, top1: 8, confidentWrong: 0, askedToChoose: 2 } });
    const byId = Object.fromEntries(lines.slice(0, -1).map((l) => [l.readingId, l]));
    expect(lines.slice(0, -1).map((l) => l.readingId)).toEqual(['r1', 'r2', 'r3', 'r5', 'r7', 'r6', 'r8', 'r9']);
    const top = (id: string) => byId[id].candidates[0]?.orderId ?? null;
    expect(['r1', 'r3', 'r5', 'r7', 'r6', 'r8'].map((id) => [top(id), byId[id].confident])).toEqual([
      ['o1', true],
      ['o3', true],
      ['o5', true],
      ['o7', true],
      ['o6', true],
      ['o8', true],
    ]);
    expect(byId.r2).toMatchObject({ confident: false });
    expect(byId.r2.candidates.map((c: { orderId: string }) => c.orderId)).toEqual(['o2', 'o3']);
    expect(byId.r9).toEqual({ readingId: 'r9', candidates: [], confident: false });
    for (const l of lines.slice(0, -1)) {
      const sum = l.candidates.reduce((s: number, c: { probability: number }) => s + c.probability, 0);
      expect(sum).toBeLessThanOrEqual(1.000001);
    }
  }, 60_000);

  it('bad input: exit code 2 and a message naming the field, nothing on stdout', async () => {
    const dir = mkdtempSync(path.join(tmpdir(), 'match-replay-'));
    const day = JSON.parse(readFileSync(fixture, 'utf8'));
    const cases: [string, (d: typeof day) => unknown, RegExp][] = [
      ['no arrival time', (d) => (delete d.readings[0].arrivedAt, d), /readings\[0\]\.arrivedAt: /],
      ['a date without a zone', (d) => ((d.orders[1].startedAt = '2026-12-02 09:20'), d), /orders\[1\]\.startedAt: must be an ISO 8601 date-time/],
      ['an unknown patient', (d) => ((d.orders[2].patientId = 'p99'), d), /orders\[2\]\.patientId: names no patient in patients: "p99"/],
      ['an unknown assigned order', (d) => ((d.readings[3].assignedOrderId = 'o99'), d), /readings\[3\]\.assignedOrderId: names no order/],
      ['an unknown test', (d) => ((d.readings[0].analyte = 'GLU'), d), /readings\[0\]\.analyte: "GLU" has no built-in run protocol/],
      ['a species word the app does not use', (d) => ((d.patients[0].species = 'canine'), d), /patients\[0\]\.species: must be one of dog, cat/],
      ['not JSON', () => '{"timeZone":', /not JSON/],
    ];
    for (const [name, change, message] of cases) {
      const file = path.join(dir, `${name.replace(/\W+/g, '-')}.json`);
      const changed = change(structuredClone(day));
      writeFileSync(file, typeof changed === 'string' ? changed : JSON.stringify(changed));
      const { code, stdout, stderr } = await replay(file);
      expect(code, name).toBe(2);
      expect(stdout, name).toBe('');
      expect(stderr, name).toMatch(message);
    }
    const missing = await replay(path.join(dir, 'absent.json'));
    expect(missing.code).toBe(2);
    expect(missing.stderr).toMatch(/cannot read it \(ENOENT\)/);
  }, 120_000);
});
