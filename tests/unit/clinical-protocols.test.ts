import { describe, expect, it } from 'vitest';
import { DEFAULT_PROTOCOLS } from '@/lib/clinical/defaults';
import { dueAt, formatCountdown, formatDuration, protocolSeconds, runState, runTimeline, stageLimitMissed } from '@/lib/clinical/protocols';

// Check values for a single-test point-of-care CRP reader (a fact of the trade, common practice, no
// published source): about 30 s of mixing, re-insertion within 10 s, then 660 s (11 min) of incubation
// and 20–35 s of measurement before the reading prints; a run started at t is due at about t + 12 min; a
// run not re-inserted in time aborts.
const crp = DEFAULT_PROTOCOLS.find((p) => p.analyte === 'cCRP')!;
const t = new Date('2026-12-01T10:00:00Z');
const at = (seconds: number) => new Date(t.getTime() + seconds * 1000);

describe('the default CRP run protocol', () => {
  it('has the check-value stages as data: 30 s mixing, re-insert within 10 s, 660 s incubation, measurement', () => {
    expect(crp.stages.map((s) => [s.key, s.seconds, s.maxSeconds ?? null])).toEqual([
      ['mix', 30, null],
      ['reinsert', 10, 10],
      ['incubate', 660, null],
      ['measure', 25, null],
    ]);
  });

  it('is due about 12 min after the start (check value), the measurement included, never before 30 s + 660 s', () => {
    const due = dueAt(t, crp.stages);
    const minutes = (due.getTime() - t.getTime()) / 60_000;
    // "About 12 min": within half a minute of it, and at least mixing + incubation (11.5 min).
    expect(Math.abs(minutes - 12)).toBeLessThanOrEqual(0.5);
    expect(minutes).toBeGreaterThanOrEqual(11.5);
    expect(protocolSeconds(crp.stages)).toBe(725);
    // The measurement step (20–35 s) is part of the run: leaving it out put the due time 20–35 s early.
    const measure = crp.stages.find((s) => s.key === 'measure')!;
    expect(measure.seconds).toBeGreaterThanOrEqual(20);
    expect(measure.seconds).toBeLessThanOrEqual(35);
  });

  it('lays the stages back to back', () => {
    const timeline = runTimeline(t, crp.stages);
    expect(timeline.map((s) => [s.key, s.startsAt.toISOString(), s.endsAt.toISOString()])).toEqual([
      ['mix', '2026-12-01T10:00:00.000Z', '2026-12-01T10:00:30.000Z'],
      ['reinsert', '2026-12-01T10:00:30.000Z', '2026-12-01T10:00:40.000Z'],
      ['incubate', '2026-12-01T10:00:40.000Z', '2026-12-01T10:11:40.000Z'],
      ['measure', '2026-12-01T10:11:40.000Z', '2026-12-01T10:12:05.000Z'],
    ]);
  });

  it('says which stage a run is in, and when it is due and overdue', () => {
    expect(runState(t, crp.stages, at(5), crp.lateSeconds)).toMatchObject({ phase: 'running', stage: { key: 'mix' }, secondsToDue: 720, secondsLeftInStage: 25 });
    expect(runState(t, crp.stages, at(35), crp.lateSeconds)).toMatchObject({ phase: 'running', stage: { key: 'reinsert' }, secondsLeftInStage: 5 });
    expect(runState(t, crp.stages, at(41), crp.lateSeconds)).toMatchObject({ phase: 'running', stage: { key: 'incubate' } });
    expect(runState(t, crp.stages, at(701), crp.lateSeconds)).toMatchObject({ phase: 'running', stage: { key: 'measure' } });
    expect(runState(t, crp.stages, at(725), crp.lateSeconds)).toMatchObject({ phase: 'due', stage: null, secondsToDue: 0 });
    expect(runState(t, crp.stages, at(725 + crp.lateSeconds), crp.lateSeconds).phase).toBe('due');
    expect(runState(t, crp.stages, at(726 + crp.lateSeconds), crp.lateSeconds).phase).toBe('overdue');
  });

  it('a re-insertion later than 10 s aborts the run (check value)', () => {
    const reinsert = crp.stages.find((s) => s.key === 'reinsert')!;
    expect(stageLimitMissed(reinsert, 10)).toBe(false);
    expect(stageLimitMissed(reinsert, 11)).toBe(true);
    expect(stageLimitMissed(crp.stages[2], 5000)).toBe(false); // no limit on incubation
  });

  it('writes durations and countdowns in the clinic’s words', () => {
    expect(formatDuration(700)).toBe('11 min 40 s');
    expect(formatDuration(45)).toBe('45 s');
    expect(formatDuration(3900)).toBe('1 h 5 min');
    expect(formatCountdown(700)).toBe('11:40');
    expect(formatCountdown(-20)).toBe('-0:20');
  });
});
