import 'server-only';
// The demo clinic: an invented practice, its people and animals. Demo use only; every name is made up.
import { randomUUID } from 'node:crypto';
import { sql } from 'drizzle-orm';
import type { Db } from './client';
import {
  auditEvents,
  bridges,
  clinics,
  instruments,
  labOrders,
  owners,
  patients,
  analyteSettings,
  printoutProfiles,
  readings,
  runProtocols,
  resultAlerts,
  resultAssignments,
  resultReviews,
  specimens,
  staffUsers,
} from './schema';
import { installClinicalDefaults } from '@/lib/clinical/install';
import { DEMO_QUALITY_TESTS, seedLabQuality } from './seed-quality';
import { DEFAULT_PROTOCOLS } from '@/lib/clinical/defaults';
import { dueAt } from '@/lib/clinical/protocols';
import { formatResult } from '@/lib/format';
import { hashPassword } from '@/lib/auth/password';
import { newBridgeToken } from '@/lib/auth/tokens';

export const DEMO_PASSWORD = 'demo-only-pass';
export const DEMO_STAFF = [
  { email: 'admin@fernhollow.example', displayName: 'Maren Oakes', role: 'admin' },
  { email: 'vet@fernhollow.example', displayName: 'Dr. Ilse Corvan', role: 'veterinarian' },
  { email: 'vet2@fernhollow.example', displayName: 'Dr. Teodor Lunn', role: 'veterinarian' },
  { email: 'tech@fernhollow.example', displayName: 'Pia Hartwell', role: 'technician' },
] as const;

export const DEMO_CRP_INSTRUMENT = 'crp-reader';

const OWNERS = [
  ['Agnes Whitlow', '+44 7700 900101'],
  ['Bram Keswick', '+44 7700 900102'],
  ['Cora Linwood', '+44 7700 900103'],
  ['Dev Anand-Rooke', '+44 7700 900104'],
  ['Elsa Marchetti', '+44 7700 900105'],
  ['Finn Galloway', '+44 7700 900106'],
  ['Greta Solberg', '+44 7700 900107'],
  ['Hugo Penhale', '+44 7700 900108'],
] as const;

type SeedPatient = {
  recordNumber: string;
  name: string;
  species: 'dog' | 'cat';
  breed: string;
  sex: 'male' | 'male_neutered' | 'female' | 'female_spayed';
  dateOfBirth: string;
  weightKg: number;
  owner: number;
};

const PATIENTS: SeedPatient[] = [
  { recordNumber: 'FH-1001', name: 'Biscuit', species: 'dog', breed: 'Labrador Retriever', sex: 'male_neutered', dateOfBirth: '2018-04-12', weightKg: 31.5, owner: 0 },
  { recordNumber: 'FH-1002', name: 'Juniper', species: 'dog', breed: 'Border Collie', sex: 'female_spayed', dateOfBirth: '2020-09-03', weightKg: 18.2, owner: 1 },
  { recordNumber: 'FH-1003', name: 'Moss', species: 'dog', breed: 'Cocker Spaniel', sex: 'male', dateOfBirth: '2016-01-22', weightKg: 13.9, owner: 2 },
  { recordNumber: 'FH-1004', name: 'Pepper', species: 'dog', breed: 'Miniature Schnauzer', sex: 'female_spayed', dateOfBirth: '2019-06-30', weightKg: 7.8, owner: 3 },
  { recordNumber: 'FH-1005', name: 'Otto', species: 'dog', breed: 'Dachshund', sex: 'male_neutered', dateOfBirth: '2015-11-08', weightKg: 9.1, owner: 4 },
  { recordNumber: 'FH-1006', name: 'Willow', species: 'cat', breed: 'Domestic Shorthair', sex: 'female_spayed', dateOfBirth: '2017-03-15', weightKg: 4.2, owner: 4 },
  { recordNumber: 'FH-1007', name: 'Tamsin', species: 'dog', breed: 'German Shepherd Dog', sex: 'female', dateOfBirth: '2021-02-19', weightKg: 29.0, owner: 5 },
  { recordNumber: 'FH-1008', name: 'Rufus', species: 'dog', breed: 'Staffordshire Bull Terrier', sex: 'male_neutered', dateOfBirth: '2014-08-27', weightKg: 17.4, owner: 6 },
  { recordNumber: 'FH-1009', name: 'Clementine', species: 'cat', breed: 'Maine Coon', sex: 'female_spayed', dateOfBirth: '2019-12-01', weightKg: 6.3, owner: 7 },
  { recordNumber: 'FH-1010', name: 'Bramble', species: 'dog', breed: 'Golden Retriever', sex: 'female_spayed', dateOfBirth: '2017-07-07', weightKg: 27.6, owner: 0 },
  { recordNumber: 'FH-1011', name: 'Sprocket', species: 'dog', breed: 'Jack Russell Terrier', sex: 'male', dateOfBirth: '2022-05-14', weightKg: 6.1, owner: 1 },
  { recordNumber: 'FH-1012', name: 'Nimbus', species: 'dog', breed: 'Whippet', sex: 'male_neutered', dateOfBirth: '2020-10-10', weightKg: 12.7, owner: 2 },
];

/** Earlier canine CRP results for Biscuit after a (made-up) surgery, so the chart has history. */
const HISTORY = [
  { daysAgo: 6, value: 8.1, comparator: null },
  { daysAgo: 4, value: 96.4, comparator: null },
  { daysAgo: 3, value: 61.0, comparator: null },
  { daysAgo: 2, value: 24.8, comparator: null },
  { daysAgo: 1, value: 5.0, comparator: '<' as const },
];

const CHEMISTRY_CODES = ['GLU', 'CREA', 'BUN', 'ALT', 'ALP', 'TP', 'ALB'];
/** code, name, UCUM unit, decimals the demo analyzer prints. */
const DEMO_ANALYTES: [string, string, string, number][] = [
  ['GLU', 'Glucose', 'mmol/L', 1],
  ['CREA', 'Creatinine', 'umol/L', 0],
  ['BUN', 'Urea nitrogen', 'mmol/L', 1],
  ['ALT', 'Alanine aminotransferase', 'U/L', 0],
  ['ALP', 'Alkaline phosphatase', 'U/L', 0],
  ['TP', 'Total protein', 'g/L', 0],
  ['ALB', 'Albumin', 'g/L', 0],
  ['WBC', 'White blood cells', '10*9/L', 2],
  ['RBC', 'Red blood cells', '10*12/L', 2],
  ['HGB', 'Haemoglobin', 'g/L', 0],
  ['HCT', 'Haematocrit', '%', 1],
  ['PLT', 'Platelets', '10*9/L', 0],
];

export async function isEmpty(db: Db): Promise<boolean> {
  const [row] = await db.select({ n: sql<number>`count(*)::int` }).from(clinics);
  return row.n === 0;
}

/** Seeds the demo clinic into an empty database; returns the demo bridge's token (for the local demo bridge only). */
export async function seedDemoClinic(db: Db): Promise<{ clinicId: string; bridgeToken: string }> {
  const passwordHash = await hashPassword(DEMO_PASSWORD);
  const token = newBridgeToken();
  return db.transaction(async (tx) => {
    const [clinic] = await tx
      .insert(clinics)
      .values({
        name: 'Fernhollow Animal Clinic',
        timeZone: 'Europe/London',
        // Demo only: unacknowledged criticals go to an invented duty mailbox (kept by the local mail sink).
        settings: { criticalEscalationMinutes: 10, escalationEmails: ['duty-phone@fernhollow.example'] },
      })
      .returning();
    const staff = await tx
      .insert(staffUsers)
      .values(DEMO_STAFF.map((s) => ({ ...s, clinicId: clinic.id, passwordHash })))
      .returning();
    const vet = staff.find((s) => s.role === 'veterinarian')!;
    const tech = staff.find((s) => s.role === 'technician')!;
    const admin = staff.find((s) => s.role === 'admin')!;

    const ownerRows = await tx
      .insert(owners)
      .values(OWNERS.map(([name, phone]) => ({ clinicId: clinic.id, name, phone })))
      .returning();
    const patientRows = await tx
      .insert(patients)
      .values(
        PATIENTS.map(({ owner, ...p }) => ({ ...p, clinicId: clinic.id, ownerId: ownerRows[owner].id, attendingVetId: vet.id })),
      )
      .returning();

    const [bridge] = await tx
      .insert(bridges)
      .values({ clinicId: clinic.id, name: 'Lab PC (bench 1)', tokenHash: token.hash, tokenHint: token.hint, createdBy: admin.id })
      .returning();
    const instrumentRows = await tx.insert(instruments).values([
      {
        clinicId: clinic.id,
        code: DEMO_CRP_INSTRUMENT,
        name: 'CRP reader (bench 1)',
        analytes: ['cCRP'],
        dialect: 'plain-printout',
        connection: { kind: 'tcp', host: '127.0.0.1', port: 4001 },
        bridgeId: bridge.id,
        serialNumber: 'SIM-0001',
      },
      {
        clinicId: clinic.id,
        code: 'chem-analyzer',
        name: 'Chemistry analyzer (bench 2)',
        analytes: ['GLU', 'CREA', 'BUN', 'ALT', 'ALP', 'TP', 'ALB'],
        dialect: 'astm-e1394',
        // The demo's ASTM analyzer sits behind a serial-to-network adapter; a real one would often be on /dev/ttyUSB1.
        connection: { kind: 'tcp', host: '127.0.0.1', port: 4002 },
        bridgeId: bridge.id,
        serialNumber: 'SIM-0002',
      },
      {
        clinicId: clinic.id,
        code: 'hema-analyzer',
        name: 'Haematology analyzer (bench 2)',
        analytes: ['WBC', 'RBC', 'HGB', 'HCT', 'PLT'],
        dialect: 'hl7v2',
        // This analyzer dials out: the bridge listens and answers each message with an HL7 ACK.
        connection: { kind: 'tcp', host: '127.0.0.1', port: 4003, mode: 'listen' },
        bridgeId: bridge.id,
        serialNumber: 'SIM-0003',
      },
    ]).returning();
    const crpReader = instrumentRows[0];

    // An example printout profile for the editor (not attached to an instrument): an invented electrolyte printer.
    await tx.insert(printoutProfiles).values({
      clinicId: clinic.id,
      profileKey: randomUUID(),
      name: 'Electrolyte printer (example)',
      version: 1,
      createdBy: admin.id,
      definition: {
        analyzer: 'Electrolyte printer, bench 3 (example)',
        encoding: 'utf8',
        record: { start: '^\\*\\*\\* ELECTROLYTES', end: '^\\*\\*\\* END', formFeed: false, maxLines: 60 },
        fields: [
          { label: 'Sample', pattern: '^ID:\\s*(?<sampleId>\\S+)', required: false, repeats: false },
          { label: 'Result', pattern: '^(?<analyte>Na|K|Cl)\\s+(?<comparator>[<>])?(?<value>[0-9.,]+)\\s+(?<unit>\\S+)', required: true, repeats: true },
          { label: 'Printed at', pattern: '^(?<date>\\d\\d/\\d\\d/\\d{4}) (?<time>\\d\\d:\\d\\d)', required: false, repeats: false },
        ],
        decimalComma: true,
        dateFormat: 'DD/MM/YYYY',
        timeFormat: 'HH:mm',
      },
    });

    await installClinicalDefaults(tx, clinic.id, admin.id);

    // The demo analyzers' tests: units as they send them (UCUM) and the decimals they print (their precision),
    // and invented run times, so chemistry and haematology runs can be started on the Bench.
    const chemistry = instrumentRows.find((i) => i.code === 'chem-analyzer')!;
    const hematology = instrumentRows.find((i) => i.code === 'hema-analyzer')!;
    await tx.insert(analyteSettings).values(
      DEMO_ANALYTES.map(([code, name, unit, decimals]) => ({
        clinicId: clinic.id,
        code,
        name,
        unit,
        displayUnit: unit,
        decimals,
        validatedSpecies: ['dog', 'cat'] as ('dog' | 'cat')[],
        speciesNote: 'Demo analyzer: validated for dogs and cats (invented).',
        updatedBy: admin.id,
      })),
    )
      // The clinical defaults may already hold these tests (with their intervals' sources): keep those.
      .onConflictDoNothing();
    await tx.insert(runProtocols).values(
      DEMO_ANALYTES.map(([code]) => {
        const chem = CHEMISTRY_CODES.includes(code);
        return {
          clinicId: clinic.id,
          analyte: code,
          instrumentId: chem ? chemistry.id : hematology.id,
          name: chem ? 'Chemistry rotor (demo)' : 'Blood count (demo)',
          stages: chem
            ? [
                { key: 'load', label: 'Load the rotor', seconds: 30, handsOn: true },
                { key: 'run', label: 'Analysis', seconds: 270 },
              ]
            : [
                { key: 'mix', label: 'Mix the tube', seconds: 20, handsOn: true },
                { key: 'count', label: 'Count', seconds: 100 },
              ],
          earlySeconds: 60,
          lateSeconds: 240,
          source: 'Invented demo analyzer; run times are made up for the demo.',
          updatedBy: admin.id,
        };
      }),
    );

    const biscuit = patientRows[0];
    const historyAssignments: string[] = [];
    const historyReadings: string[] = [];
    for (const [i, h] of HISTORY.entries()) {
      const measuredAt = new Date(Date.now() - h.daysAgo * 86_400_000);
      const printed = `${h.comparator ?? ''}${h.value.toFixed(1)} mg/L`;
      const [specimen] = await tx
        .insert(specimens)
        .values({ clinicId: clinic.id, instrumentId: crpReader.id, instrumentCode: DEMO_CRP_INSTRUMENT, receivedAt: measuredAt })
        .returning();
      const [reading] = await tx
        .insert(readings)
        .values({
          specimenId: specimen.id,
          clinicId: clinic.id,
          bridgeId: bridge.id,
          idempotencyKey: `seed-history-${i}`,
          instrumentId: crpReader.id,
          instrumentCode: DEMO_CRP_INSTRUMENT,
          instrumentSerial: 'SIM-0001',
          analyte: 'cCRP',
          value: h.value,
          comparator: h.comparator,
          unit: 'mg/L',
          measuredAt,
          receivedAt: measuredAt,
          raw: `(demo history) RESULT    ${printed}\n`,
          status: 'assigned',
          patientId: biscuit.id,
        })
        .returning();
      const [assignment] = await tx
        .insert(resultAssignments)
        .values({ clinicId: clinic.id, readingId: reading.id, patientId: biscuit.id, assignedBy: tech.id, assignedAt: measuredAt })
        .returning();
      historyAssignments.push(assignment.id);
      historyReadings.push(reading.id);
      await tx.insert(auditEvents).values([
        { clinicId: clinic.id, at: measuredAt, actorBridgeId: bridge.id, action: 'reading.received', entityType: 'reading', entityId: reading.id, details: { demo: true } },
        { clinicId: clinic.id, at: measuredAt, actorUserId: tech.id, action: 'reading.assigned', entityType: 'reading', entityId: reading.id, details: { patientId: biscuit.id, method: 'manual', demo: true } },
      ]);
    }

    // Dr. Corvan has signed off all but Biscuit's latest result, which waits in her unreviewed list.
    for (let i = 0; i < HISTORY.length - 1; i++) {
      const at = new Date(Date.now() - HISTORY[i].daysAgo * 86_400_000 + 3_600_000);
      const rows: { kind: 'comment' | 'reviewed'; comment: string | null }[] = [{ kind: 'reviewed', comment: null }];
      if (i === 1) rows.unshift({ kind: 'comment', comment: 'Day 2 after surgery: a rise is expected. Repeat daily.' });
      for (const row of rows) {
        const [review] = await tx
          .insert(resultReviews)
          .values({ ...row, clinicId: clinic.id, readingId: historyReadings[i], assignmentId: historyAssignments[i], reviewerId: vet.id, at })
          .returning();
        await tx.insert(auditEvents).values({
          clinicId: clinic.id,
          at,
          actorUserId: vet.id,
          action: row.kind === 'reviewed' ? 'reading.reviewed' : 'reading.commented',
          entityType: 'reading',
          entityId: historyReadings[i],
          details: { reviewId: review.id, assignmentId: historyAssignments[i], demo: true, ...(row.comment ? { comment: row.comment } : {}) },
        });
      }
    }

    // Two critical results (above the demo clinic's critical limit): one acknowledged, one waiting.
    const CRITICAL = [
      { patient: patientRows[9], hoursAgo: 20, value: 152.0, comparator: null, acknowledged: true },
      { patient: patientRows[7], hoursAgo: 2, value: 200, comparator: '>' as const, acknowledged: false },
    ];
    for (const [i, c] of CRITICAL.entries()) {
      const at = new Date(Date.now() - c.hoursAgo * 3_600_000);
      // Printed as the reader prints it (a measuring limit without decimals) and shown by the one formatter.
      const printed = formatResult({ value: c.value, comparator: c.comparator ?? null, unit: 'mg/L' }, 1);
      const [specimen] = await tx
        .insert(specimens)
        .values({ clinicId: clinic.id, instrumentId: crpReader.id, instrumentCode: DEMO_CRP_INSTRUMENT, receivedAt: at })
        .returning();
      const [reading] = await tx
        .insert(readings)
        .values({
          specimenId: specimen.id,
          clinicId: clinic.id,
          bridgeId: bridge.id,
          idempotencyKey: `seed-critical-${i}`,
          instrumentId: crpReader.id,
          instrumentCode: DEMO_CRP_INSTRUMENT,
          instrumentSerial: 'SIM-0001',
          analyte: 'cCRP',
          value: c.value,
          comparator: c.comparator,
          unit: 'mg/L',
          valueDecimals: 1,
          measuredAt: at,
          receivedAt: at,
          raw: `(demo history) RESULT    ${printed}\n`,
          status: 'assigned',
          patientId: c.patient.id,
        })
        .returning();
      const [assignment] = await tx
        .insert(resultAssignments)
        .values({ clinicId: clinic.id, readingId: reading.id, patientId: c.patient.id, assignedBy: tech.id, assignedAt: at })
        .returning();
      const ackAt = new Date(at.getTime() + 15 * 60_000);
      const [alert] = await tx
        .insert(resultAlerts)
        .values({
          clinicId: clinic.id,
          readingId: reading.id,
          assignmentId: assignment.id,
          patientId: c.patient.id,
          recipientId: vet.id,
          kind: 'critical-high',
          message: `cCRP ${printed} for ${c.patient.name} (${c.patient.recordNumber}): above the critical limit 100 mg/L.`,
          threshold: 100,
          unit: 'mg/L',
          createdAt: at,
          ...(c.acknowledged ? { acknowledgedAt: ackAt, acknowledgedBy: vet.id, acknowledgeNote: 'Owner called; started treatment.' } : {}),
        })
        .returning();
      await tx.insert(auditEvents).values([
        { clinicId: clinic.id, at, actorBridgeId: bridge.id, action: 'reading.received', entityType: 'reading', entityId: reading.id, details: { demo: true } },
        { clinicId: clinic.id, at, actorUserId: tech.id, action: 'reading.assigned', entityType: 'reading', entityId: reading.id, details: { patientId: c.patient.id, method: 'manual', demo: true } },
        { clinicId: clinic.id, at, actorUserId: tech.id, action: 'alert.raised', entityType: 'alert', entityId: alert.id, details: { readingId: reading.id, demo: true } },
      ]);
      if (c.acknowledged) {
        await tx.insert(resultReviews).values({ clinicId: clinic.id, readingId: reading.id, assignmentId: assignment.id, reviewerId: vet.id, kind: 'reviewed', at: ackAt });
        await tx.insert(auditEvents).values([
          { clinicId: clinic.id, at: ackAt, actorUserId: vet.id, action: 'reading.critical-acknowledged', entityType: 'reading', entityId: reading.id, details: { alertId: alert.id, demo: true } },
          { clinicId: clinic.id, at: ackAt, actorUserId: vet.id, action: 'reading.reviewed', entityType: 'reading', entityId: reading.id, details: { assignmentId: assignment.id, demo: true } },
        ]);
      }
    }

    // Two tests on the bench, due about when the simulated reader prints its first anonymous readings:
    // Moss on the CRP reader, then Otto on a reader that is not connected (no instrument chosen).
    const protocol = DEFAULT_PROTOCOLS.find((p) => p.analyte === 'cCRP')!;
    const BENCH = [
      { patient: patientRows[2], startedSecondsAgo: 660, instrumentId: crpReader.id },
      { patient: patientRows[4], startedSecondsAgo: 600, instrumentId: null },
    ];
    const [protocolRow] = await tx.query.runProtocols.findMany({ where: (p, { eq }) => eq(p.clinicId, clinic.id), limit: 1 });
    for (const b of BENCH) {
      const startedAt = new Date(Date.now() - b.startedSecondsAgo * 1000);
      const [order] = await tx
        .insert(labOrders)
        .values({
          clinicId: clinic.id,
          patientId: b.patient.id,
          analyte: 'cCRP',
          instrumentId: b.instrumentId,
          sampleType: 'whole_blood',
          orderedBy: vet.id,
          startedBy: tech.id,
          startedAt,
          dueAt: dueAt(startedAt, protocol.stages),
          protocolId: protocolRow?.id ?? null,
          stages: protocol.stages,
        })
        .returning();
      await tx.insert(auditEvents).values({
        clinicId: clinic.id,
        at: startedAt,
        actorUserId: tech.id,
        action: 'order.started',
        entityType: 'order',
        entityId: order.id,
        details: { patientId: b.patient.id, analyte: 'cCRP', demo: true },
      });
    }
    await seedLabQuality(tx, {
      clinicId: clinic.id,
      timeZone: clinic.timeZone,
      bridgeId: bridge.id,
      techId: tech.id,
      adminId: admin.id,
      instruments: [
        { id: crpReader.id, code: crpReader.code, serial: 'SIM-0001', tests: DEMO_QUALITY_TESTS.CRP },
        { id: chemistry.id, code: chemistry.code, serial: 'SIM-0002', tests: DEMO_QUALITY_TESTS.CHEMISTRY },
        { id: hematology.id, code: hematology.code, serial: 'SIM-0003', tests: DEMO_QUALITY_TESTS.HEMATOLOGY },
      ],
    });

    // A chemistry panel for Juniper on a labelled tube, and a blood count for Pepper without a label: the demo's
    // analyzers run them when due and print the label or the record number, so Intake shows ID matches.
    const DEMO_RUNS = [
      { patient: patientRows[1], instrument: chemistry, sampleId: 'T-7QK4M2', sampleType: 'serum' as const, startedSecondsAgo: 240, analytes: CHEMISTRY_CODES },
      { patient: patientRows[3], instrument: hematology, sampleId: null, sampleType: 'whole_blood' as const, startedSecondsAgo: 60, analytes: ['WBC', 'RBC', 'HGB', 'HCT', 'PLT'] },
    ];
    const demoProtocols = await tx.query.runProtocols.findMany({ where: (p, { eq }) => eq(p.clinicId, clinic.id) });
    for (const run of DEMO_RUNS) {
      const startedAt = new Date(Date.now() - run.startedSecondsAgo * 1000);
      for (const analyte of run.analytes) {
        const protocolRow = demoProtocols.find((p) => p.analyte === analyte && p.instrumentId === run.instrument.id)!;
        const [order] = await tx
          .insert(labOrders)
          .values({
            clinicId: clinic.id,
            patientId: run.patient.id,
            analyte,
            instrumentId: run.instrument.id,
            sampleType: run.sampleType,
            sampleId: run.sampleId,
            orderedBy: vet.id,
            startedBy: tech.id,
            startedAt,
            dueAt: dueAt(startedAt, protocolRow.stages),
            protocolId: protocolRow.id,
            stages: protocolRow.stages,
          })
          .returning();
        await tx.insert(auditEvents).values({
          clinicId: clinic.id,
          at: startedAt,
          actorUserId: tech.id,
          action: 'order.started',
          entityType: 'order',
          entityId: order.id,
          details: { patientId: run.patient.id, analyte, demo: true },
        });
      }
    }
    return { clinicId: clinic.id, bridgeToken: token.token };
  });
}
