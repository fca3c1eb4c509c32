// Ingest decides a bridge's batch as a whole (specimens, unit mappings, the lab-quality step, one INSERT
// per table). The reference is the same records sent one at a time, each stored and checked in turn:
// the stored outcome must be the same. The batch mixes what each step reads: one tube's readings (sample
// ID in two cases), one message's readings (no sample ID, one measurement time), a reading of its own,
// a key sent twice, an unparsed capture, a control run found by the clinic's sample-ID pattern and one
// marked by the analyzer, patient readings before and after a rejected control, an expired kit lot and
// a mapped unit. Westgard 1-3s (a control beyond ±3 SD rejects the run): Westgard, Barry, Hunt and Groth,
// Clin Chem 1981;27:493–501 (citation from memory). 70 on a 50 ± 5 target is +4 SD.
import { asc, eq, inArray } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import { auditEvents, controlMaterials, instrumentUnits, instruments, kitLots, readings, specimens, unparsedCaptures } from '@/db/schema';
import { seededDatabase } from '../helpers/db';
import { body, ingest, readingRecord, unparsedRecord } from './support';

const CODE = 'eqv-reader';
const MEASURED = '2026-11-30T09:15:00.000Z';
const UUID = /[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}/g;

function records() {
  const r = (key: string, payload: Record<string, unknown>) => readingRecord(`eqv-key-${key}`, payload, CODE);
  return [
    r('001', { analyte: 'cCRP', value: 10, sampleId: 'S-1' }),
    r('002', { analyte: 'cCRP', value: 11, sampleId: 's-1' }),
    // The clinic's default QC pattern (^QC) makes this a control run; its material is named by the sample ID.
    r('003', { analyte: 'cCRP', value: 70, sampleId: 'QC-L1' }),
    r('004', { analyte: 'cCRP', value: 20, sampleId: 'S-2' }),
    r('005', { analyte: 'GLU', value: 5.5, unit: 'MGPERDL', measuredAt: MEASURED }),
    r('006', { analyte: 'GLU', value: 5.6, unit: 'MGPERDL', measuredAt: MEASURED }),
    r('007', { analyte: 'GLU', value: 5.7, unit: 'mmol/L' }),
    unparsedRecord('eqv-key-008', 'PAPER OUT\r\n', 'printer notice', CODE),
    r('001', { analyte: 'cCRP', value: 10, sampleId: 'S-1' }),
    // The analyzer says control; no material is set up for GLU, so it has none.
    r('010', { analyte: 'GLU', value: 4.1, specimenRole: 'control' }),
    r('011', { analyte: 'GLU', value: 6.1, patientRef: 'P-7', measuredAt: MEASURED }),
    // Same tube label as 001 with a patient ID: the tube lookup goes by instrument and sample ID.
    r('012', { analyte: 'cCRP', value: 12, sampleId: 'S-1', patientRef: 'P-9' }),
    r('013', { analyte: 'cCRP', value: 13, sampleId: 'S-3', comparator: '<', notes: ['lipaemic'] }),
  ];
}

/** What ingest stored, with every id replaced by the position of the record that made it. */
async function scenario(oneAtATime: boolean) {
  const { database, clinicId, bridgeToken } = await seededDatabase();
  try {
    const db = database.db;
    const [instrument] = await db.insert(instruments).values({ clinicId, code: CODE, name: 'Equivalence reader', analytes: ['cCRP', 'GLU'], dialect: 'plain-printout' }).returning();
    await db.insert(kitLots).values({ clinicId, analyte: 'cCRP', lotNumber: 'EQ-OLD', expiresOn: '2020-01-31', testsPerKit: 50, openedOn: '2020-01-02', instrumentId: instrument.id });
    await db.insert(controlMaterials).values({ clinicId, analyte: 'cCRP', instrumentId: instrument.id, name: 'CRP control', lotNumber: 'C-EQ', level: '1', sampleId: 'QC-L1', unit: 'mg/L', targetMean: 50, targetSd: 5, targetSource: 'insert' });
    await db.insert(instrumentUnits).values({ clinicId, instrumentId: instrument.id, printed: 'MGPERDL', ucum: 'mg/dL' });

    const sent = records();
    const answers: { key: string; status: string; id: string }[] = [];
    for (const batch of oneAtATime ? sent.map((r) => [r]) : [sent]) {
      const response = await ingest(bridgeToken, batch);
      expect(response.status, await response.clone().text()).toBe(200);
      answers.push(...(await body(response)).results);
    }
    const position = new Map<string, number>();
    answers.forEach((a, i) => position.has(a.id) || position.set(a.id, i));

    const rows = await db.select().from(readings).where(eq(readings.instrumentId, instrument.id)).orderBy(asc(readings.arrival));
    const specimenOf = new Map<string, number>();
    const byId = new Map(rows.map((row) => [row.id, row]));
    const stored = answers.map((a, i) => {
      const row = byId.get(a.id);
      if (!row) return { status: a.status, capture: true };
      if (row.specimenId && !specimenOf.has(row.specimenId)) specimenOf.set(row.specimenId, i);
      return {
        status: a.status,
        readingStatus: row.status,
        specimen: row.specimenId ? specimenOf.get(row.specimenId) : null,
        arrivalRank: rows.indexOf(row),
        kitLot: row.kitLotId !== null,
        marks: row.qualityMarks,
        material: row.controlMaterialId !== null,
        unit: row.unit,
        printedUnit: row.printedUnit,
        value: row.value,
        comparator: row.comparator,
        notes: row.notes,
        sampleId: row.sampleId,
        patientRef: row.patientRef,
        measuredAt: row.measuredAt?.toISOString() ?? null,
      };
    });
    const ids = [...position.keys()];
    const audit = (await db.select().from(auditEvents).where(inArray(auditEvents.entityId, ids)))
      .map((e) => `${position.get(e.entityId)} ${e.action} ${JSON.stringify(e.details).replace(UUID, 'an id')}`)
      .sort();
    const specimenRows = await db.select().from(specimens).where(eq(specimens.instrumentId, instrument.id));
    const units = await db.select({ printed: instrumentUnits.printed, count: instrumentUnits.readingCount }).from(instrumentUnits).where(eq(instrumentUnits.instrumentId, instrument.id));
    const captures = await db.select({ reason: unparsedCaptures.reason }).from(unparsedCaptures).where(eq(unparsedCaptures.instrumentCode, CODE));
    return { stored, audit, specimenCount: specimenRows.length, units, captures };
  } finally {
    await database.close();
  }
}

describe('a batch stored at once', () => {
  it('stores what the same records sent one at a time store', async () => {
    const oneByOne = await scenario(true);
    const batch = await scenario(false);
    expect(batch).toEqual(oneByOne);

    // And that outcome is the one the clinic expects, record by record.
    const s = batch.stored as Record<string, unknown>[];
    expect(s.map((x) => x.status)).toEqual(['created', 'created', 'created', 'created', 'created', 'created', 'created', 'created', 'duplicate', 'created', 'created', 'created', 'created']);
    // One tube: S-1 and s-1, and the same label with a patient ID; one message: 005 and 006.
    expect([s[1].specimen, s[11].specimen]).toEqual([0, 0]);
    expect(s[5].specimen).toBe(4);
    expect(new Set([s[0].specimen, s[3].specimen, s[4].specimen, s[6].specimen, s[10].specimen, s[12].specimen]).size).toBe(6);
    // The rejected control marks the patient CRP results after it, not the ones before.
    expect(s[2]).toMatchObject({ readingStatus: 'control', material: true, marks: ['kit-expired'] });
    expect(s[0]).toMatchObject({ readingStatus: 'unassigned', kitLot: true, marks: ['kit-expired'] });
    expect(s[3]).toMatchObject({ readingStatus: 'unassigned', marks: ['kit-expired', 'qc-failed'] });
    expect(s[12]).toMatchObject({ marks: ['kit-expired', 'qc-failed'], comparator: '<', notes: ['lipaemic'] });
    expect(s[9]).toMatchObject({ readingStatus: 'control', material: false, marks: [] });
    // The mapped unit is read as mapped, with the printed text kept.
    expect(s[4]).toMatchObject({ unit: 'mg/dL', printedUnit: 'MGPERDL', kitLot: false });
    expect(s[6]).toMatchObject({ unit: 'mmol/L', printedUnit: null });
    expect(s[7]).toEqual({ status: 'created', capture: true });
    expect(batch.units).toEqual([{ printed: 'MGPERDL', count: 2 }]);
    expect(batch.audit.filter((a) => a.includes('reading.marked-control'))).toHaveLength(2);
    expect(batch.audit.filter((a) => a.includes('.received'))).toHaveLength(12);
    // Arrival order is the order sent.
    expect(s.filter((x) => !x.capture && x.status === 'created').map((x) => x.arrivalRank)).toEqual([0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10]);
  });
});
