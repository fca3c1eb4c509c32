// Westgard multirule on sequences built from the rule definitions in the multirule paper,
// Clin Chem 1981;27:493–501 (citation and rule wording from memory, verify). Every control has target mean 100
// and SD 10, so an observation at z SD is the value 100 + 10·z.
import { describe, expect, it } from 'vitest';
import { currentStatus, evaluateHistory, evaluateRun, groupIntoRuns, type QcObservation } from '@/lib/quality/westgard';

let t = 0;
const obs = (runId: string, level: string, z: number): QcObservation => ({
  id: `${runId}-${level}`,
  runId,
  level,
  value: 100 + 10 * z,
  mean: 100,
  sd: 10,
  at: ++t,
});
/** Observations of one level, one per run: r1, r2, … */
const series = (level: string, zs: number[], prefix = 'r') => zs.map((z, i) => obs(`${prefix}${i + 1}`, level, z));
const lastRun = (all: QcObservation[]) => {
  const runId = all[all.length - 1].runId;
  return { history: all.filter((o) => o.runId !== runId), run: all.filter((o) => o.runId === runId) };
};
const rulesOf = (e: ReturnType<typeof evaluateRun>) => e.violations.map((v) => v.rule);

describe('1-2s (warning)', () => {
  it('one control beyond 2 SD warns and does not reject', () => {
    const e = evaluateRun([], [obs('r1', 'L1', 2.5)]);
    expect(e.status).toBe('warning');
    expect(rulesOf(e)).toEqual(['1-2s']);
    expect(e.violations[0].runIds).toEqual(['r1']);
  });
  it('exactly 2 SD does not exceed the limit (definition: "exceeds")', () => {
    expect(evaluateRun([], [obs('r1', 'L1', 2)]).status).toBe('accepted');
  });
});

describe('1-3s', () => {
  it('one control beyond +3 SD or −3 SD rejects the run and names it', () => {
    const high = evaluateRun([], [obs('r1', 'L1', 3.2)]);
    expect(high.status).toBe('rejected');
    expect(rulesOf(high)).toEqual(['1-3s']);
    expect(high.violations[0].runIds).toEqual(['r1']);
    expect(evaluateRun([], [obs('r2', 'L1', -3.1)]).status).toBe('rejected');
  });
  it('exactly 3 SD is only a 1-2s warning', () => {
    expect(evaluateRun([], [obs('r1', 'L1', 3)]).status).toBe('warning');
  });
});

describe('2-2s', () => {
  it('within one level: two consecutive runs beyond the same +2 SD limit', () => {
    const { history, run } = lastRun(series('L1', [2.3, 2.4]));
    const e = evaluateRun(history, run);
    expect(e.status).toBe('rejected');
    const v = e.violations.find((x) => x.rule === '2-2s')!;
    expect(v.scope).toBe('within-level');
    expect(v.level).toBe('L1');
    expect(v.runIds).toEqual(['r1', 'r2']);
  });
  it('beyond opposite limits in two runs is not 2-2s (nor R-4s, which is within one run)', () => {
    const { history, run } = lastRun(series('L1', [2.3, -2.4]));
    const e = evaluateRun(history, run);
    expect(e.status).toBe('warning');
  });
  it('across levels: both controls of one run beyond −2 SD', () => {
    const e = evaluateRun([], [obs('r1', 'L1', -2.1), obs('r1', 'L2', -2.5)]);
    expect(e.status).toBe('rejected');
    const v = e.violations.find((x) => x.rule === '2-2s')!;
    expect(v.scope).toBe('across-levels');
    expect(v.runIds).toEqual(['r1']);
    expect(v.observationIds.sort()).toEqual(['r1-L1', 'r1-L2']);
  });

  it('level 2 beyond +2 SD in one run and level 1 beyond +2 SD in the next is not 2-2s (neither within a level nor within a run)', () => {
    const all = [obs('r1', 'L1', 0.2), obs('r1', 'L2', 2.3), obs('r2', 'L1', 2.4), obs('r2', 'L2', 0.1)];
    const { history, run } = lastRun(all);
    expect(evaluateRun(history, run).status).toBe('warning');
  });
});

describe('R-4s', () => {
  it('within a run, one control beyond +2 SD and the other beyond −2 SD', () => {
    const e = evaluateRun([], [obs('r1', 'L1', 2.1), obs('r1', 'L2', -2.2)]);
    expect(e.status).toBe('rejected');
    expect(rulesOf(e)).toEqual(['R-4s']);
    expect(e.violations[0].scope).toBe('within-run');
  });
  it('+2.1 and −1.9 SD (range 4.0 SD but one inside 2 SD) is only a warning', () => {
    expect(evaluateRun([], [obs('r1', 'L1', 2.1), obs('r1', 'L2', -1.9)]).status).toBe('warning');
  });
});

describe('4-1s', () => {
  it('within one level: four consecutive runs beyond +1 SD', () => {
    const { history, run } = lastRun(series('L1', [1.2, 1.5, 1.1, 1.3]));
    const e = evaluateRun(history, run);
    expect(e.status).toBe('rejected');
    const v = e.violations.find((x) => x.rule === '4-1s')!;
    expect(v.runIds).toEqual(['r1', 'r2', 'r3', 'r4']);
    expect(v.scope).toBe('within-level');
  });
  it('one of the four inside 1 SD breaks it', () => {
    const { history, run } = lastRun(series('L1', [1.2, 1.5, 0.9, 1.3]));
    expect(evaluateRun(history, run).status).toBe('accepted');
  });
  it('across levels: two runs of two levels, all beyond −1 SD', () => {
    const all = [obs('r1', 'L1', -1.2), obs('r1', 'L2', -1.4), obs('r2', 'L1', -1.1), obs('r2', 'L2', -1.6)];
    const { history, run } = lastRun(all);
    const e = evaluateRun(history, run);
    expect(e.status).toBe('rejected');
    const v = e.violations.find((x) => x.rule === '4-1s')!;
    expect(v.scope).toBe('across-levels');
    expect(v.runIds).toEqual(['r1', 'r2']);
  });
  it('with the 1981 warning gate, a 4-1s trend is checked only when the run also breaks 2 SD', () => {
    const quiet = lastRun(series('L1', [1.2, 1.5, 1.1, 1.3]));
    expect(evaluateRun(quiet.history, quiet.run, { warningGate: true }).status).toBe('accepted');
    const loud = lastRun(series('L1', [1.2, 1.5, 1.1, 2.1]));
    expect(rulesOf(evaluateRun(loud.history, loud.run, { warningGate: true }))).toContain('4-1s');
  });
});

describe('10-x', () => {
  it('within one level: ten consecutive runs above the mean', () => {
    const { history, run } = lastRun(series('L1', [0.5, 0.2, 0.9, 0.1, 0.4, 0.3, 0.8, 0.6, 0.2, 0.7]));
    const e = evaluateRun(history, run);
    expect(e.status).toBe('rejected');
    const v = e.violations.find((x) => x.rule === '10-x')!;
    expect(v.runIds).toHaveLength(10);
  });
  it('nine on one side is not enough, and a value on the mean breaks the run', () => {
    const nine = lastRun(series('L1', [0.5, 0.2, 0.9, 0.1, 0.4, 0.3, 0.8, 0.6, 0.2]));
    expect(evaluateRun(nine.history, nine.run).status).toBe('accepted');
    const broken = lastRun(series('L1', [0.5, 0.2, 0.9, 0.1, 0, 0.3, 0.8, 0.6, 0.2, 0.7]));
    expect(evaluateRun(broken.history, broken.run).status).toBe('accepted');
  });
  it('across levels: five runs of two levels, all below the mean', () => {
    const all: QcObservation[] = [];
    for (let r = 1; r <= 5; r++) all.push(obs(`r${r}`, 'L1', -0.4), obs(`r${r}`, 'L2', -0.6));
    const { history, run } = lastRun(all);
    const e = evaluateRun(history, run);
    const v = e.violations.find((x) => x.rule === '10-x')!;
    expect(v.scope).toBe('across-levels');
    expect(v.runIds).toEqual(['r1', 'r2', 'r3', 'r4', 'r5']);
  });
});

describe('multi-level histories', () => {
  it('a level in control does not hide the other level breaking 2-2s across runs', () => {
    const all = [obs('r1', 'L1', 0.1), obs('r1', 'L2', 2.2), obs('r2', 'L1', -0.3), obs('r2', 'L2', 2.6)];
    const e = evaluateRun(...(Object.values(lastRun(all)) as [QcObservation[], QcObservation[]]));
    const v = e.violations.find((x) => x.rule === '2-2s')!;
    expect(v.level).toBe('L2');
    expect(v.runIds).toEqual(['r1', 'r2']);
  });
  it('a rejected run is kept off later checks, so the next run is judged on its own (common practice, no source)', () => {
    const history = evaluateHistory([obs('r1', 'L1', 3.5), obs('r2', 'L1', 2.2)]);
    expect(history.map((h) => h.status)).toEqual(['rejected', 'warning']);
    expect(currentStatus(history)).toBe('warning');
  });
  it('QC stays rejected until a later run is accepted', () => {
    const h = evaluateHistory([obs('r1', 'L1', 0.2), obs('r2', 'L1', -3.4)]);
    expect(currentStatus(h)).toBe('rejected');
    expect(currentStatus(evaluateHistory([obs('q1', 'L1', 0.2), obs('q2', 'L1', -3.4), obs('q3', 'L1', 0.3)]))).toBe('accepted');
  });
  it('refuses a control without a positive SD', () => {
    expect(() => evaluateRun([], [{ ...obs('r1', 'L1', 1), sd: 0 }])).toThrow(/SD/);
  });
});

describe('groupIntoRuns', () => {
  it('levels measured together share a run; a repeated level or a long gap starts a new run', () => {
    const min = 60_000;
    const grouped = groupIntoRuns([
      { id: 'a', level: 'L1', at: 0 },
      { id: 'b', level: 'L2', at: 5 * min },
      { id: 'c', level: 'L1', at: 10 * min },
      { id: 'd', level: 'L2', at: 200 * min },
    ]);
    expect(grouped.map((g) => g.runId)).toEqual(['a', 'a', 'c', 'd']);
  });
});
