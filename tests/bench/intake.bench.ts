// Intake with 5,000 readings waiting (about 1,400 samples: chemistry panels of 7, blood counts of 5 and
// single CRP slips): one page of the waiting list, with its true counts, filters' facets and the oldest wait.
// Target: a page in well under 100 ms on embedded PGlite, so the list stays live at any queue length.
import { beforeAll, bench, describe } from 'vitest';
import { eq } from 'drizzle-orm';
import { bridges } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { ingestBatch } from '@/lib/readings/ingest';
import { listWaiting } from '@/lib/readings/queries';
import { waitingQuery } from '@/lib/validation/api';
import { seededDatabase } from '../helpers/db';

let actor: Actor;

beforeAll(async () => {
  const { database, clinicId } = await seededDatabase();
  const [bridge] = await database.db.select().from(bridges).where(eq(bridges.clinicId, clinicId));
  const tech = await database.db.query.staffUsers.findFirst({ where: (s, { eq: e }) => e(s.role, 'technician') });
  actor = { clinicId, userId: tech!.id, role: 'technician', displayName: tech!.displayName } as Actor;
  const records = [];
  for (let i = 0; records.length < 5000; i++) {
    const at = new Date(Date.now() - (5000 - records.length) * 1000).toISOString();
    const kind = i % 3;
    const [instrument, analytes] = kind === 0 ? ['chem-analyzer', ['GLU', 'CREA', 'BUN', 'ALT', 'ALP', 'TP', 'ALB']] : kind === 1 ? ['hema-analyzer', ['WBC', 'RBC', 'HGB', 'HCT', 'PLT']] : ['crp-reader', ['cCRP']];
    for (const analyte of analytes as string[]) {
      records.push({
        key: `bench-waiting-${records.length}`,
        instrument: instrument as string,
        receivedAt: at,
        payload: { kind: 'reading' as const, analyte, value: 10, code: null, text: null, notes: [], comparator: null, unit: 'U/L', flags: [], sampleId: `S-${i}`, patientRef: null, measuredAt: at, instrumentSerial: null, referenceRange: null, resultStatus: null, raw: `${analyte} 10\r` },
      });
    }
  }
  for (let i = 0; i < 5000; i += 200) await ingestBatch(bridge, { records: records.slice(i, i + 200) });
}, 600_000);

describe('intake with 5,000 waiting', () => {
  bench('first page (25 samples) with counts and facets', async () => {
    await listWaiting(actor, waitingQuery.parse({ page: 1, pageSize: 25 }));
  }, { iterations: 20 });
  bench('last page, filtered by instrument', async () => {
    await listWaiting(actor, waitingQuery.parse({ page: 19, pageSize: 25, instrument: 'chem-analyzer' }));
  }, { iterations: 20 });
});
