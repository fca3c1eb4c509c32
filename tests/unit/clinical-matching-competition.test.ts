import { describe, expect, it } from 'vitest';
import { POINTS, rankWaitingReadings, type MatchOrder, type MatchReading } from '@/lib/clinical/matching';

// Worked cases: several waiting readings that fit the same run. A single-test reader gives one reading per
// run (common practice, no source), so at most one of them can be that run's result; the others must not
// keep looking like a strong match for the same animal. Run timing as in clinical-matching.test.ts:
// started 10:00:00, due 700 s later at 10:11:40, tolerance 60 s early to 180 s late.

const T0 = Date.UTC(2026, 11, 1, 10, 0, 0);
const at = (seconds: number) => new Date(T0 + seconds * 1000);
const READER = 'aaaaaaaa-0000-4000-8000-000000000001';

const context = {
  patients: [
    { id: 'p-moss', name: 'Moss', recordNumber: 'FH-1003', species: 'dog' },
    { id: 'p-otto', name: 'Otto', recordNumber: 'FH-1005', species: 'dog' },
  ],
  instruments: [{ id: READER, name: 'CRP reader', channels: 1 }],
  analytes: [{ code: 'cCRP', validatedSpecies: ['dog'] }],
};
const order = (id: string, patientId: string, startSeconds: number, extra: Partial<MatchOrder> = {}): MatchOrder => ({
  id,
  patientId,
  analyte: 'cCRP',
  instrumentId: READER,
  sampleId: null,
  startedAt: at(startSeconds),
  dueAt: at(startSeconds + 700),
  status: 'open',
  earlySeconds: 60,
  lateSeconds: 180,
  ...extra,
});
const reading = (id: string, arrivedSeconds: number, extra: Partial<MatchReading> = {}): MatchReading => ({
  id,
  analyte: 'cCRP',
  instrumentId: READER,
  sampleId: null,
  patientRef: null,
  arrivedAt: at(arrivedSeconds),
  ...extra,
});

describe('waiting readings competing for one run', () => {
  it('the reading nearest the due time keeps the match; a later one says another reading fits better', () => {
    // Moss's run is due 10:11:40. Reading r-near arrives 10:11:50 (10 s late), r-far 10:14:00 (140 s late).
    const ranked = rankWaitingReadings([reading('r-far', 840), reading('r-near', 710)], { ...context, orders: [order('o-moss', 'p-moss', 0)] });
    const near = ranked.get('r-near')![0];
    const far = ranked.get('r-far')![0];
    expect(near).toMatchObject({ patientId: 'p-moss', strength: 'strong' });
    expect(near.reasons.map((r) => r.code)).not.toContain('another-reading-fits');
    expect(far.reasons.map((r) => r.code)).toContain('another-reading-fits');
    expect(far.reasons.find((r) => r.code === 'another-reading-fits')!.text).toMatch(/10:11:50/);
    expect(far.strength).not.toBe('strong');
    expect(far.score).toBeLessThan(near.score);
  });

  it('two runs, two readings: each keeps its own run (no penalty when the runs differ)', () => {
    // Otto started 10:00:00 (due 10:11:40) on no instrument; Moss started 10:05:00 on the reader (due 10:16:40).
    const orders = [order('o-otto', 'p-otto', 0, { instrumentId: null }), order('o-moss', 'p-moss', 300)];
    const ranked = rankWaitingReadings([reading('r1', 700), reading('r2', 1000)], { ...context, orders });
    // r1 at 10:11:40 fits Otto's run exactly; r2 at 10:16:40 fits Moss's.
    expect(ranked.get('r1')![0].patientId).toBe('p-otto');
    expect(ranked.get('r2')![0].patientId).toBe('p-moss');
    expect(ranked.get('r1')![0].reasons.map((r) => r.code)).not.toContain('another-reading-fits');
  });

  it('an exact sample ID wins the run over a reading that is merely on time', () => {
    // The run's tube is labelled A-77. r-id carries A-77 but arrives 150 s late; r-time arrives at the due time.
    const orders = [order('o-moss', 'p-moss', 0, { sampleId: 'A-77' })];
    const ranked = rankWaitingReadings([reading('r-time', 700), reading('r-id', 850, { sampleId: 'A-77' })], { ...context, orders });
    expect(ranked.get('r-id')![0]).toMatchObject({ patientId: 'p-moss', strength: 'exact' });
    const other = ranked.get('r-time')![0];
    expect(other.reasons.find((r) => r.code === 'another-reading-fits')!.text).toMatch(/carries this run's ID/);
    expect(other.reasons.find((r) => r.code === 'another-reading-fits')!.points).toBe(POINTS.anotherReadingFits);
  });

  it('a lone reading is ranked exactly as on its own', () => {
    const orders = [order('o-moss', 'p-moss', 0)];
    const [only] = rankWaitingReadings([reading('r1', 700)], { ...context, orders }).get('r1')!;
    // 20 analyte + 15 instrument + 40 right at due + 10 first in line + 5 species (as in clinical-matching.test.ts)
    expect(only.score).toBe(90);
  });
});
