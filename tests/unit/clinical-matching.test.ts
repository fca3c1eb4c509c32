import { describe, expect, it } from 'vitest';
import { autoAssignTarget, POINTS, rankCandidates, speciesWarning, type MatchInput, type MatchOrder } from '@/lib/clinical/matching';

// Worked cases for the ranking. The clinical facts behind the rules: a single-test point-of-care CRP
// reader runs one test at a time and its reading is due about 12 min after the start (common practice,
// no published source); CRP is a major acute-phase protein in dogs but not in cats (Cerón, Eckersall,
// Martínez-Subiela, Vet Clin Pathol 2005;34:85–99). Timings: 10:00:00 start + 700 s = 10:11:40 due.

const T0 = Date.UTC(2026, 11, 1, 10, 0, 0);
const at = (seconds: number) => new Date(T0 + seconds * 1000);
const READER_A = 'aaaaaaaa-0000-4000-8000-000000000001';
const READER_B = 'bbbbbbbb-0000-4000-8000-000000000002';

const patients = [
  { id: 'p-biscuit', name: 'Biscuit', recordNumber: 'FH-1001', species: 'dog' },
  { id: 'p-juniper', name: 'Juniper', recordNumber: 'FH-1002', species: 'dog' },
  { id: 'p-moss', name: 'Moss', recordNumber: 'FH-1003', species: 'dog' },
  { id: 'p-willow', name: 'Willow', recordNumber: 'FH-1006', species: 'cat' },
];
const instruments = [
  { id: READER_A, name: 'CRP reader A', channels: 1 },
  { id: READER_B, name: 'CRP reader B', channels: 1 },
];
const analytes = [{ code: 'cCRP', validatedSpecies: ['dog'] }];

const order = (id: string, patientId: string, startSeconds: number, extra: Partial<MatchOrder> = {}): MatchOrder => ({
  id,
  patientId,
  analyte: 'cCRP',
  instrumentId: READER_A,
  sampleId: null,
  startedAt: at(startSeconds),
  dueAt: at(startSeconds + 700),
  status: 'open',
  earlySeconds: 60,
  lateSeconds: 180,
  ...extra,
});

const input = (orders: MatchOrder[], reading: Partial<MatchInput['reading']> = {}): MatchInput => ({
  reading: { id: 'r1', analyte: 'cCRP', instrumentId: READER_A, sampleId: null, patientRef: null, arrivedAt: at(700), ...reading },
  orders,
  patients,
  instruments,
  analytes,
});

const codes = (c: { reasons: { code: string }[] }) => c.reasons.map((r) => r.code);

describe('ranking candidates for an anonymous reading', () => {
  it('one run on the reader, reading at the due time: that patient, with every reason in words', () => {
    // Biscuit's run started 10:00:00, due 10:11:40; the reading arrives 10:11:40 from the same reader.
    const [top] = rankCandidates(input([order('o1', 'p-biscuit', 0)]));
    expect(top).toMatchObject({ patientId: 'p-biscuit', orderId: 'o1', strength: 'strong', tiedWith: 0 });
    expect(codes(top)).toEqual(['analyte-match', 'instrument-match', 'on-time', 'first-in-line', 'species-validated']);
    // 20 + 15 + 40 (right at due) + 10 + 5
    expect(top.score).toBe(90);
    expect(top.reasons.find((r) => r.code === 'on-time')!.text).toMatch(/^Arrived right at the due time \(10:11:40;/);
  });

  it('two runs on one single-channel reader: first started, first finished', () => {
    // Biscuit started 10:00 (due 10:11:40), Juniper 10:05 (due 10:16:40). A reading at 10:11:50 is
    // Biscuit's: on time (+10 s) and first in line; Juniper's run could not have finished yet.
    const ranked = rankCandidates(input([order('o-j', 'p-juniper', 300), order('o-b', 'p-biscuit', 0)], { arrivedAt: at(710) }));
    expect(ranked.map((c) => c.patientId)).toEqual(['p-biscuit', 'p-juniper']);
    expect(codes(ranked[0])).toContain('first-in-line');
    expect(codes(ranked[1])).toEqual(expect.arrayContaining(['too-early', 'not-first-in-line']));
    expect(ranked[1].reasons.find((r) => r.code === 'not-first-in-line')!.text).toMatch(/^Biscuit's run on CRP reader A started earlier/);
  });

  it('two readers running at once: the reading goes with the run on the reader that sent it', () => {
    // Biscuit on reader A due 10:11:40, Moss on reader B due 10:11:50; reader B's reading at 10:11:45.
    const orders = [order('o-a', 'p-biscuit', 0), order('o-b', 'p-moss', 10, { instrumentId: READER_B })];
    const ranked = rankCandidates(input(orders, { instrumentId: READER_B, arrivedAt: at(705) }));
    expect(ranked.map((c) => c.patientId)).toEqual(['p-moss', 'p-biscuit']);
    expect(codes(ranked[1])).toContain('instrument-differs');
    // Each reader has one run, so both are first in their own line; only the reader that sent it counts.
    expect(codes(ranked[0])).toContain('first-in-line');
    expect(codes(ranked[1])).not.toContain('first-in-line');
  });

  it('a tie is shown as a tie, never broken silently; the order is stable (earliest start, then record number)', () => {
    // Two runs with no instrument named, started the same second: nothing tells them apart.
    const orders = [order('o-m', 'p-moss', 0, { instrumentId: null }), order('o-j', 'p-juniper', 0, { instrumentId: null })];
    const ranked = rankCandidates(input(orders));
    expect(ranked.map((c) => [c.recordNumber, c.tiedWith])).toEqual([
      ['FH-1002', 1],
      ['FH-1003', 1],
    ]);
    expect(ranked[0].score).toBe(ranked[1].score);
  });

  it('an exact sample ID comes first even against timing and instrument, with the contrary reasons shown', () => {
    // Juniper's tube A-1023 was entered as started later and on the other reader; the slip prints
    // SAMPLE A-1023 (in other case and with a space). The printed ID is direct evidence: Juniper first,
    // her "too early" and "other instrument" reasons in view, and Biscuit marked as not the one named.
    const orders = [order('o-b', 'p-biscuit', 0), order('o-j', 'p-juniper', 200, { sampleId: 'A-1023', instrumentId: READER_B })];
    const ranked = rankCandidates(input(orders, { sampleId: 'a-1023 ' }));
    expect(ranked[0]).toMatchObject({ patientId: 'p-juniper', strength: 'exact' });
    expect(codes(ranked[0])).toEqual(expect.arrayContaining(['sample-id-match', 'instrument-differs', 'too-early']));
    expect(ranked[1]).toMatchObject({ patientId: 'p-biscuit', strength: 'possible' });
    expect(ranked[1].reasons[0]).toEqual({ code: 'id-names-other', points: POINTS.idNamesOther, text: 'The ID printed on the reading names Juniper (FH-1002), not this patient.' });
  });

  it('a sample ID that differs from the tube label counts against the order', () => {
    const ranked = rankCandidates(input([order('o-b', 'p-biscuit', 0, { sampleId: 'A-2000' })], { sampleId: 'A-1023' }));
    expect(codes(ranked[0])).toContain('sample-id-differs');
  });

  it('a record number printed on the reading names the patient even without an open order', () => {
    const ranked = rankCandidates(input([order('o-b', 'p-biscuit', 0)], { patientRef: 'FH-1003' }));
    const moss = ranked.find((c) => c.patientId === 'p-moss')!;
    expect(moss).toMatchObject({ orderId: null, strength: 'exact' });
    expect(codes(moss)).toEqual(['record-id-match', 'no-order', 'species-validated']);
    // Named by the ID, Moss comes first although Biscuit's run is right on time (90 − 60 for the other ID).
    expect(ranked.map((c) => [c.patientId, c.score])).toEqual([
      ['p-moss', 85],
      ['p-biscuit', 30],
    ]);
  });

  it('a cat for a dog-validated test is warned about in plain words and ranks below a dog', () => {
    const orders = [order('o-w', 'p-willow', 0, { instrumentId: null }), order('o-m', 'p-moss', 0, { instrumentId: null })];
    const ranked = rankCandidates(input(orders));
    expect(ranked.map((c) => c.patientId)).toEqual(['p-moss', 'p-willow']);
    expect(ranked[1].speciesWarning).toBe('cCRP is validated for dogs; Willow is a cat. Interpret with care.');
    expect(speciesWarning(analytes[0], patients[0])).toBeNull();
  });

  it('leaves out closed orders, other tests and runs started after the reading arrived', () => {
    const orders = [
      order('o-closed', 'p-biscuit', 0, { status: 'fulfilled' }),
      order('o-glu', 'p-juniper', 0, { analyte: 'GLU' }),
      order('o-later', 'p-moss', 701),
    ];
    expect(rankCandidates(input(orders))).toEqual([]);
  });

  it('late beyond tolerance is possible but not credited; far too early counts against', () => {
    const late = rankCandidates(input([order('o', 'p-biscuit', 0)], { arrivedAt: at(700 + 600) }))[0];
    expect(late.reasons.find((r) => r.code === 'late')).toMatchObject({ points: 0 });
    const early = rankCandidates(input([order('o', 'p-biscuit', 0)], { arrivedAt: at(300) }))[0];
    expect(early.reasons.find((r) => r.code === 'too-early')).toMatchObject({ points: POINTS.tooEarly });
  });
});

describe('the auto-assign rule (exact ID to one open order only)', () => {
  it('assigns on an exact sample ID to exactly one open order', () => {
    const target = autoAssignTarget(input([order('o-b', 'p-biscuit', 0, { sampleId: 'A-1023' }), order('o-j', 'p-juniper', 0)], { sampleId: 'A-1023' }));
    expect(target).toMatchObject({ orderId: 'o-b', patientId: 'p-biscuit' });
    expect(target!.reason).toMatch(/^Exact sample ID A-1023/);
  });

  it('assigns on the record number when that patient has exactly one open order for the test', () => {
    expect(autoAssignTarget(input([order('o-m', 'p-moss', 0)], { patientRef: 'FH-1003' }))).toMatchObject({ orderId: 'o-m' });
  });

  it('never guesses: no ID, two orders with the ID, wrong instrument, a cat, or only timing → null', () => {
    expect(autoAssignTarget(input([order('o-b', 'p-biscuit', 0)]))).toBeNull();
    expect(
      autoAssignTarget(input([order('o1', 'p-biscuit', 0, { sampleId: 'S1' }), order('o2', 'p-moss', 0, { sampleId: 'S1' })], { sampleId: 'S1' })),
    ).toBeNull();
    expect(autoAssignTarget(input([order('o-b', 'p-biscuit', 0, { sampleId: 'S1', instrumentId: READER_B })], { sampleId: 'S1' }))).toBeNull();
    expect(autoAssignTarget(input([order('o-w', 'p-willow', 0, { sampleId: 'S1' })], { sampleId: 'S1' }))).toBeNull();
    expect(autoAssignTarget(input([order('o-m', 'p-moss', 0, { sampleId: 'S2' })], { sampleId: 'S1' }))).toBeNull();
  });

  it('two IDs that name two different orders: a person decides', () => {
    const orders = [order('o-b', 'p-biscuit', 0, { sampleId: 'S1' }), order('o-m', 'p-moss', 0)];
    expect(autoAssignTarget(input(orders, { sampleId: 'S1', patientRef: 'FH-1003' }))).toBeNull();
  });
});
