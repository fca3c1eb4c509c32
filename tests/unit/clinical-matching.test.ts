import { describe, expect, it } from 'vitest';
import {
  abortProbability,
  autoAssignTarget,
  defaultTiming,
  learnTiming,
  normalCdf,
  speciesWarning,
  suggestMatch,
  suggestMatches,
  type MatchContext,
  type MatchOrder,
  type MatchReading,
} from '@/lib/clinical/matching';

// Worked cases for the probabilistic matcher. The facts behind them: a single-test point-of-care CRP
// reader runs one test at a time and prints its reading about 12 min after the start (mixing, re-insertion,
// incubation and measurement; common practice, no published source; the default protocol takes 725 s);
// CRP is a major acute-phase protein in dogs but not in cats (Vet Clin
// Pathol 2005;34:85–99, from memory). Timings: start 10:00:00 + 725 s = due 10:12:05.

const T0 = Date.UTC(2026, 11, 1, 10, 0, 0);
const RUN = 725;
const at = (seconds: number) => new Date(T0 + seconds * 1000);
const READER_A = 'reader-a';
const READER_B = 'reader-b';
const READER_C = 'reader-c';

const patients = [
  { id: 'p-biscuit', name: 'Biscuit', recordNumber: 'FH-1001', species: 'dog' },
  { id: 'p-juniper', name: 'Juniper', recordNumber: 'FH-1002', species: 'dog' },
  { id: 'p-moss', name: 'Moss', recordNumber: 'FH-1003', species: 'dog' },
  { id: 'p-willow', name: 'Willow', recordNumber: 'FH-1006', species: 'cat' },
];
const instruments = [
  { id: READER_A, name: 'CRP reader A', channels: 1 },
  { id: READER_B, name: 'CRP reader B', channels: 1 },
  { id: READER_C, name: 'CRP reader C', channels: 1 },
];
const analytes = [{ code: 'cCRP', validatedSpecies: ['dog'] }];

const order = (id: string, patientId: string, startSeconds: number, extra: Partial<MatchOrder> = {}): MatchOrder => ({
  id,
  patientId,
  analyte: 'cCRP',
  instrumentId: READER_A,
  sampleId: null,
  startedAt: at(startSeconds),
  runSeconds: RUN,
  ...extra,
});
const reading = (arrivedSeconds: number, extra: Partial<MatchReading> = {}): MatchReading => ({
  id: 'r1',
  analyte: 'cCRP',
  instrumentId: READER_A,
  sampleId: null,
  patientRef: null,
  arrivedAt: at(arrivedSeconds),
  ...extra,
});
const context = (orders: MatchOrder[], extra: Partial<MatchContext> = {}): MatchContext => ({ orders, patients, instruments, analytes, ...extra });
const probabilities = (s: { candidates: { orderId: string | null; probability: number }[] }) =>
  Object.fromEntries(s.candidates.map((c) => [c.orderId, c.probability]));

describe('the statistics underneath', () => {
  it('normal CDF matches the standard normal table', () => {
    // Standard normal table values (any statistics handbook): Φ(0) = 0.5, Φ(1) = 0.8413447, Φ(1.96) = 0.9750021, Φ(-2) = 0.0227501.
    expect(normalCdf(0)).toBeCloseTo(0.5, 7);
    expect(normalCdf(1)).toBeCloseTo(0.8413447, 6);
    expect(normalCdf(1.96)).toBeCloseTo(0.9750021, 6);
    expect(normalCdf(-2)).toBeCloseTo(0.0227501, 6);
  });

  it('learns the click spread robustly: median and 1.4826 × MAD, blended with the defaults while thin', () => {
    // Offsets 10, 20, 30, 40, 50 → median 30, absolute deviations 20, 10, 0, 10, 20 → MAD 10, spread 14.826
    // (consistency constant 1.4826 for the normal: Rousseeuw & Croux, JASA 1993;88:1273–1283).
    const few = learnTiming([10, 20, 30, 40, 50]);
    // Blended with the defaults (0 s, 60 s) at weight 20: (5·30 + 20·0)/25 = 6; (5·14.826 + 20·60)/25 = 50.9652.
    expect(few.offsetSeconds).toBeCloseTo(6, 6);
    expect(few.spreadSeconds).toBeCloseTo(50.9652, 3);
    // With many confirmed matches the clinic's own estimate dominates, and a wild value (a reading taken
    // half an hour late) does not move the median: 401 values, median still 30 → (401·30)/(401+20).
    const many = learnTiming([...Array.from({ length: 400 }, (_, i) => [10, 20, 30, 40, 50][i % 5]), 1799]);
    expect(many.offsetSeconds).toBeCloseTo((401 * 30) / 421, 3);
    expect(many.spreadSeconds).toBeCloseTo((401 * 14.826 + 20 * 60) / 421, 3);
    expect(learnTiming([])).toEqual(defaultTiming());
  });

  it('the chance an open run was aborted grows with how overdue it is', () => {
    const p = [0, 60, 180, 600, 2400].map((s) => abortProbability(s));
    for (let i = 1; i < p.length; i += 1) expect(p[i]).toBeGreaterThan(p[i - 1]);
    expect(p[0]).toBeLessThan(0.1);
    expect(p[4]).toBeGreaterThan(0.99);
  });
});

describe('probabilities for an anonymous reading (worked cases)', () => {
  it('one run on the reader, reading at the due time: that patient, confidently, with reasons in words', () => {
    const s = suggestMatch(reading(RUN), context([order('o1', 'p-biscuit', 0)]));
    expect(s.confident).toBe(true);
    expect(s.candidates[0]).toMatchObject({ orderId: 'o1', patientId: 'p-biscuit', speciesWarning: null });
    expect(s.candidates[0].probability).toBeGreaterThan(0.999);
    const texts = s.candidates[0].reasons.map((r) => r.text);
    expect(texts).toContain('Started on CRP reader A, the one that sent the reading.');
    expect(texts.find((t) => t.startsWith('Arrived'))).toMatch(/^Arrived right at the due time \(10:12:05\)/);
  });

  it('two dogs started 20 s apart with no reader named: asked to choose, both shown', () => {
    const orders = [order('o-b', 'p-biscuit', 0, { instrumentId: null }), order('o-j', 'p-juniper', 20, { instrumentId: null })];
    const s = suggestMatch(reading(RUN + 10), context(orders));
    expect(s.confident).toBe(false);
    const p = probabilities(s);
    expect(p['o-b']).toBeGreaterThan(0.2);
    expect(p['o-j']).toBeGreaterThan(0.2);
    expect(p['o-b'] + p['o-j'] + s.noneProbability).toBeCloseTo(1, 9);
  });

  it('a run 40 min overdue against a fresh one on the same reader: the fresh one, confidently', () => {
    // Biscuit's run started 09:20 on reader A and never printed (aborted, left open); Juniper's started at
    // 10:00 on reader A; the reading arrives at Juniper's due time.
    const orders = [order('o-stale', 'p-biscuit', -2400), order('o-fresh', 'p-juniper', 0)];
    const s = suggestMatch(reading(RUN), context(orders));
    expect(s.candidates[0].orderId).toBe('o-fresh');
    expect(s.confident).toBe(true);
    expect(probabilities(s)['o-stale'] ?? 0).toBeLessThan(0.001);
  });

  it('an exact sample ID beats timing and reader', () => {
    // Juniper's tube A-1023 was started later, on reader B; the slip prints "a-1023 " (other case, a space).
    const orders = [order('o-b', 'p-biscuit', 0), order('o-j', 'p-juniper', 200, { sampleId: 'A-1023', instrumentId: READER_B })];
    const s = suggestMatch(reading(RUN, { sampleId: 'a-1023 ' }), context(orders));
    expect(s.candidates[0].orderId).toBe('o-j');
    expect(s.candidates[0].probability).toBeGreaterThan(0.99);
    const biscuit = s.candidates.find((c) => c.orderId === 'o-b');
    if (biscuit) expect(biscuit.reasons.map((r) => r.text)).toContain('The ID printed on the reading names Juniper (FH-1002), not this patient.');
  });

  it("a cat's order ranks by timing like a dog's, with the species warning beside it", () => {
    // Willow (a cat) started on reader A at 10:00; Moss (a dog), no reader named, at 10:03.
    const orders = [order('o-w', 'p-willow', 0), order('o-m', 'p-moss', 180, { instrumentId: null })];
    const s = suggestMatch(reading(RUN), context(orders));
    expect(s.candidates[0]).toMatchObject({ orderId: 'o-w', speciesWarning: 'cCRP is validated for dogs; Willow is a cat. Interpret with care.' });
    expect(s.confident).toBe(true);
    // Swap the species: the same probabilities, since species is never evidence of identity.
    const asDog = suggestMatch(reading(RUN), context(orders, { patients: patients.map((p) => ({ ...p, species: 'dog' })) }));
    expect(asDog.candidates[0].probability).toBeCloseTo(s.candidates[0].probability, 12);
    expect(speciesWarning(analytes[0], patients[0])).toBeNull();
  });

  it('a named reader must be the one that sent the reading', () => {
    const orders = [order('o-a', 'p-biscuit', 0), order('o-b', 'p-moss', 10, { instrumentId: READER_B })];
    const s = suggestMatch(reading(RUN + 5, { instrumentId: READER_B }), context(orders));
    expect(s.candidates[0].orderId).toBe('o-b');
    expect(probabilities(s)['o-a'] ?? 0).toBeLessThan(0.001);
  });

  it('a "started" click a minute and a half late does not sink the true order', () => {
    // The click came 90 s after the real start, so the reading arrives 90 s before the due time; the only other
    // open run is on another reader.
    const orders = [order('o-b', 'p-biscuit', 0), order('o-m', 'p-moss', 30, { instrumentId: READER_B })];
    const s = suggestMatch(reading(RUN - 90), context(orders));
    expect(s.candidates[0].orderId).toBe('o-b');
    expect(s.confident).toBe(true);
  });

  it('one run gives one reading: two waiting readings share out two runs jointly', () => {
    // Unnamed runs started 10:00 and 10:06; readings at 10:12:05 (reader A) and 10:18:05 (reader B).
    const orders = [order('o-1', 'p-biscuit', 0, { instrumentId: null }), order('o-2', 'p-moss', 360, { instrumentId: null })];
    const r1 = reading(RUN, { id: 'r1' });
    const r2 = reading(RUN + 360, { id: 'r2', instrumentId: READER_B });
    const s = suggestMatches([r1, r2], context(orders));
    expect(s.get('r1')!.candidates[0].orderId).toBe('o-1');
    expect(s.get('r2')!.candidates[0].orderId).toBe('o-2');
    // r2 would fit o-1 only very late; o-1 is r1's, so r2 does not take it.
    expect(probabilities(s.get('r2')!)['o-1'] ?? 0).toBeLessThan(0.001);
    // Intake asks only for the readings on its page: r2's suggestion is the same, still weighed with r1.
    const page = suggestMatches([r1, r2], context(orders), { only: new Set(['r2']) });
    expect([...page.keys()]).toEqual(['r2']);
    expect(page.get('r2')).toEqual(s.get('r2'));
    expect(suggestMatches([r2], context(orders)).get('r2')).not.toEqual(s.get('r2'));
    // Only the top candidate kept: the same as the first of the whole list, reasons included.
    const top = suggestMatches([r1, r2], context(orders), { top: 1 }).get('r1')!;
    expect(top).toEqual({ ...s.get('r1')!, candidates: s.get('r1')!.candidates.slice(0, 1) });
  });

  it('an aborted run must have fitted on the reader between its previous reading and the next run', () => {
    // Two single-channel readers (one run at a time; an aborted run holds a reader until re-insertion,
    // about 40 s: common practice, no source); B has sent nothing today. A's previous reading came at
    // 10:20:52, 23 s before the run behind a reading on A at 10:33:20 began (10:21:15). Biscuit's run,
    // named on A, was clicked at 10:21:36; Juniper's, no reader named, at 10:22:22 (it may be running on B).
    // For Juniper's to be the one, Biscuit's would have to have been aborted on A inside those 23 s,
    // shorter than an aborted run lasts: Biscuit's, confidently.
    const T = 2000;
    const orders = [order('o-b', 'p-biscuit', T - 704), order('o-j', 'p-juniper', T - 658, { instrumentId: null })];
    const placed = [{ instrumentId: READER_A, arrivedAt: at(T - 748), startedAt: at(T - 748 - RUN) }];
    const s = suggestMatch(reading(T), context(orders, { instruments: instruments.slice(0, 2), placed }));
    expect(s.candidates[0].orderId).toBe('o-b');
    expect(s.confident).toBe(true);
  });

  it('a click a few seconds before a reader\'s last reading still lets that run be running there', () => {
    // Two readers. Reader A's previous reading came at 10:20:00, reader B's at 10:20:50; a reading on A at
    // 10:33:20. Biscuit's run (no reader named) was clicked at 10:21:46, Juniper's (none named) at 10:20:48,
    // 2 s before B's reading: with clicks a minute early or late, Juniper's run may well have started on B
    // after it and still be running, so the reading on A may be either's. The start is one unknown: "after
    // B's last reading" and "reading still to come" are weighed together, not as two independent chances.
    const T = 2000;
    const orders = [order('o-b', 'p-biscuit', T - 694, { instrumentId: null }), order('o-j', 'p-juniper', T - 752, { instrumentId: null })];
    const placed = [
      { instrumentId: READER_A, arrivedAt: at(T - 800), startedAt: at(T - 800 - RUN) },
      { instrumentId: READER_B, arrivedAt: at(T - 750), startedAt: at(T - 750 - RUN) },
    ];
    const s = suggestMatch(reading(T), context(orders, { instruments: instruments.slice(0, 2), placed }));
    const p = probabilities(s);
    expect(s.confident).toBe(false);
    expect(p['o-b']).toBeGreaterThan(0.2);
    expect(p['o-j']).toBeGreaterThan(0.2);
  });

  it('an unnamed run read as aborted must have fitted on a reader too', () => {
    // Three readers; a reading on A at 10:33:20, so the run behind it began at 10:21:15. B and C were busy
    // all that time (their runs 10:18:35–10:30:40 and 10:19:51–10:31:56); A was free from its previous
    // reading at 10:19:30. Biscuit's run, named on A, was clicked at 10:20:41; Juniper's, no reader named,
    // at 10:21:12. Whichever is not the reading's was aborted (it has no reading), and its short aborted
    // run (about 40 s, until re-insertion: common practice, no source) had to fit on A before 10:21:15:
    // Biscuit's would need a click 6 s late, Juniper's one at least 37 s late. So Juniper's is the likelier,
    // though Biscuit's click is nearer the due time; and neither is confident.
    const T = 2000;
    const orders = [order('o-b', 'p-biscuit', T - 759), order('o-j', 'p-juniper', T - 728, { instrumentId: null })];
    const placed = [
      { instrumentId: READER_B, arrivedAt: at(T - 160), startedAt: at(T - 160 - RUN) },
      { instrumentId: READER_C, arrivedAt: at(T - 84), startedAt: at(T - 84 - RUN) },
      { instrumentId: READER_A, arrivedAt: at(T - 830), startedAt: at(T - 830 - RUN) },
    ];
    const s = suggestMatch(reading(T), context(orders, { placed }));
    const p = probabilities(s);
    expect(s.confident).toBe(false);
    expect(p['o-j']).toBeGreaterThan(p['o-b']);
  });

  it('leaves out closed orders, other tests and runs started after the reading arrived', () => {
    const orders = [order('o-closed', 'p-biscuit', 0, { status: 'fulfilled' }), order('o-glu', 'p-juniper', 0, { analyte: 'GLU' }), order('o-later', 'p-moss', RUN + 1)];
    const s = suggestMatch(reading(RUN), context(orders));
    expect(s.candidates).toEqual([]);
    expect(s.noneProbability).toBe(1);
    expect(s.confident).toBe(false);
  });

  it('a record number names a patient without an open order: offered, never confident', () => {
    const s = suggestMatch(reading(RUN, { patientRef: 'FH-1003' }), context([]));
    expect(s.candidates[0]).toMatchObject({ patientId: 'p-moss', orderId: null });
    expect(s.confident).toBe(false);
  });
});

describe('the auto-assign rule (exact ID to one open order only)', () => {
  const input = (orders: MatchOrder[], r: Partial<MatchReading>) => ({ ...context(orders), reading: reading(RUN, r) });
  it('assigns on an exact sample ID to exactly one open order', () => {
    const target = autoAssignTarget(input([order('o-b', 'p-biscuit', 0, { sampleId: 'A-1023' }), order('o-j', 'p-juniper', 0)], { sampleId: 'A-1023' }));
    expect(target).toMatchObject({ orderId: 'o-b', patientId: 'p-biscuit' });
    expect(target!.reason).toMatch(/^Exact sample ID A-1023/);
  });

  it('assigns on the record number when that patient has exactly one open order for the test', () => {
    expect(autoAssignTarget(input([order('o-m', 'p-moss', 0)], { patientRef: 'FH-1003' }))).toMatchObject({ orderId: 'o-m' });
  });

  it('never on a probability: no ID, two orders with the ID, wrong instrument, a cat → null', () => {
    expect(autoAssignTarget(input([order('o-b', 'p-biscuit', 0)], {}))).toBeNull();
    expect(autoAssignTarget(input([order('o1', 'p-biscuit', 0, { sampleId: 'S1' }), order('o2', 'p-moss', 0, { sampleId: 'S1' })], { sampleId: 'S1' }))).toBeNull();
    expect(autoAssignTarget(input([order('o-b', 'p-biscuit', 0, { sampleId: 'S1', instrumentId: READER_B })], { sampleId: 'S1' }))).toBeNull();
    expect(autoAssignTarget(input([order('o-w', 'p-willow', 0, { sampleId: 'S1' })], { sampleId: 'S1' }))).toBeNull();
    expect(autoAssignTarget(input([order('o-m', 'p-moss', 0, { sampleId: 'S2' })], { sampleId: 'S1' }))).toBeNull();
  });

  it('two IDs that name two different orders: a person decides', () => {
    const orders = [order('o-b', 'p-biscuit', 0, { sampleId: 'S1' }), order('o-m', 'p-moss', 0)];
    expect(autoAssignTarget(input(orders, { sampleId: 'S1', patientRef: 'FH-1003' }))).toBeNull();
  });
});
