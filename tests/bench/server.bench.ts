// Server-side costs on embedded PGlite: storing a full bridge batch (200 readings, one transaction,
// audit events and NOTIFY included), and ranking Intake's waiting readings against open tests.
// Targets: a full batch stored in well under a second; ranking 100 waiting readings against 20 running tests
// in a few milliseconds (Intake recomputes it on every change).
import { beforeAll, bench, describe } from 'vitest';
import { eq } from 'drizzle-orm';
import { bridges } from '@/db/schema';
import { suggestMatches, type MatchOrder, type MatchReading } from '@/lib/clinical/matching';
import { ingestBatch } from '@/lib/readings/ingest';
import { seededDatabase } from '../helpers/db';

let bridge: typeof bridges.$inferSelect;
let batchNumber = 0;

beforeAll(async () => {
  const { database, clinicId } = await seededDatabase();
  [bridge] = await database.db.select().from(bridges).where(eq(bridges.clinicId, clinicId));
});

function batch() {
  batchNumber += 1;
  return {
    records: Array.from({ length: 200 }, (_, i) => ({
      key: `bench-${batchNumber}-${i}`,
      instrument: 'crp-reader',
      receivedAt: new Date().toISOString(),
      payload: {
        kind: 'reading' as const,
        analyte: 'cCRP',
        value: (i % 90) + 0.5,
        comparator: null,
        unit: 'mg/L',
        flags: [],
        sampleId: null,
        patientRef: null,
        measuredAt: new Date().toISOString(),
        instrumentSerial: 'SIM-0001',
        referenceRange: null,
        code: null,
        text: null,
        notes: [],
        resultStatus: null,
        raw: `RESULT    ${(i % 90) + 0.5} mg/L\r\n`,
      },
    })),
  };
}

const T0 = Date.UTC(2026, 11, 1, 9, 0, 0);
const orders: MatchOrder[] = Array.from({ length: 20 }, (_, i) => ({
  id: `o${i}`,
  patientId: `p${i}`,
  analyte: 'cCRP',
  instrumentId: i % 2 ? 'reader-a' : 'reader-b',
  sampleId: i % 3 ? null : `S-${i}`,
  startedAt: new Date(T0 + i * 60_000),
  runSeconds: 725,
  status: 'open',
}));
const waiting: MatchReading[] = Array.from({ length: 100 }, (_, i) => ({
  id: `r${i}`,
  analyte: 'cCRP',
  instrumentId: i % 2 ? 'reader-a' : 'reader-b',
  sampleId: i % 7 ? null : `S-${i % 20}`,
  patientRef: null,
  arrivedAt: new Date(T0 + 725_000 + i * 20_000),
}));
const context = {
  orders,
  patients: orders.map((o, i) => ({ id: o.patientId, name: `Patient ${i}`, recordNumber: `B-${i}`, species: i % 5 ? 'dog' : 'cat' })),
  instruments: [
    { id: 'reader-a', name: 'Reader A', channels: 1 },
    { id: 'reader-b', name: 'Reader B', channels: 1 },
  ],
  analytes: [{ code: 'cCRP', validatedSpecies: ['dog'] }],
};

describe('server', () => {
  bench('store one full bridge batch (200 readings)', async () => {
    await ingestBatch(bridge, batch());
  }, { iterations: 10 });
  bench('suggest for 100 waiting readings against 20 running tests', () => {
    suggestMatches(waiting, context);
  });
});
