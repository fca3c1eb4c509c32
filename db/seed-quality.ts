import 'server-only';
// Demo lab-quality records for the invented clinic: kit lots counting down, daily room temperatures, two
// control levels per test with 20 days of QC (one rejected run, then an accepted rerun), TEa goals and a
// verified reference interval. Every number here is invented for the demo, except where a source is named.
import type { Tx } from './client';
import { auditEvents, controlMaterials, instruments, intervalVerifications, kitLots, qualityGoals, readings, referenceIntervals, roomTemperatureLogs } from './schema';
import { and, eq, gte } from 'drizzle-orm';
import { localDay } from '@/lib/quality/kits';

interface DemoTest {
  code: string;
  unit: string;
  /** Control targets (level 1, level 2) as an insert would give them: mean and SD. */
  levels: [[number, number], [number, number]];
  decimals: number;
  /** Allowable total error, % (ASVCP TEa guidelines, Vet Clin Pathol 2013;42:424–436 for chemistry and
   * Vet Clin Pathol 2018;47:9–21 for haematology; values from memory, verify before relying on them). */
  tea: number;
}

const CRP: DemoTest[] = [{ code: 'cCRP', unit: 'mg/L', levels: [[12, 0.8], [62, 3.5]], decimals: 1, tea: 20 }];
const CHEMISTRY: DemoTest[] = [
  { code: 'GLU', unit: 'mmol/L', levels: [[5.5, 0.18], [16.2, 0.5]], decimals: 1, tea: 20 },
  { code: 'CREA', unit: 'umol/L', levels: [[95, 4], [480, 16]], decimals: 0, tea: 20 },
  { code: 'BUN', unit: 'mmol/L', levels: [[6.1, 0.3], [21.5, 0.9]], decimals: 1, tea: 12 },
  { code: 'ALT', unit: 'U/L', levels: [[48, 2.4], [210, 9]], decimals: 0, tea: 25 },
  { code: 'ALP', unit: 'U/L', levels: [[95, 4.5], [420, 18]], decimals: 0, tea: 25 },
  { code: 'TP', unit: 'g/L', levels: [[58, 1.4], [78, 1.9]], decimals: 0, tea: 10 },
  { code: 'ALB', unit: 'g/L', levels: [[28, 0.9], [42, 1.2]], decimals: 0, tea: 15 },
];
const HEMATOLOGY: DemoTest[] = [
  { code: 'WBC', unit: '10*9/L', levels: [[4.2, 0.15], [16.5, 0.5]], decimals: 2, tea: 20 },
  { code: 'RBC', unit: '10*12/L', levels: [[4.1, 0.07], [7.6, 0.12]], decimals: 2, tea: 10 },
  { code: 'HGB', unit: 'g/L', levels: [[95, 1.8], [165, 2.9]], decimals: 0, tea: 10 },
  { code: 'HCT', unit: '%', levels: [[28.5, 0.6], [48.2, 0.9]], decimals: 1, tea: 10 },
  { code: 'PLT', unit: '10*9/L', levels: [[95, 6], [380, 19]], decimals: 0, tea: 25 },
];

/** SD offsets for the daily runs: in control, alternating sides, so no 2-2s, 4-1s or 10-x occurs by accident. */
const PATTERN = [0.4, -0.7, 0.9, -0.3, 0.6, -1.1, 0.2, -0.5, 1.3, -0.9, 0.1, -0.6, 0.8, -0.2, 0.5, -1.2, 0.7, -0.4, 1.0, -0.8, 0.3];
const DAYS = 20;
const DAY = 86_400_000;

const round = (v: number, decimals: number) => Number(v.toFixed(decimals));

export async function seedLabQuality(
  tx: Tx,
  ctx: { clinicId: string; timeZone: string; bridgeId: string; techId: string; adminId: string; instruments: { id: string; code: string; serial: string; tests: DemoTest[] }[] },
) {
  const { clinicId, bridgeId, techId, adminId } = ctx;
  const now = Date.now();
  const today = new Date(now);
  const isoDay = (t: number) => localDay(new Date(t), ctx.timeZone);

  // Room temperature, 08:00 each day; one day forgotten and one warm day (invented).
  const temps: (typeof roomTemperatureLogs.$inferInsert)[] = [];
  for (let d = DAYS; d >= 0; d--) {
    if (d === 8) continue;
    temps.push({ clinicId, day: isoDay(now - d * DAY), temperatureC: d === 3 ? 26.5 : round(20.5 + ((d * 7) % 5) * 0.3, 1), recordedBy: techId, note: d === 3 ? 'air conditioning off over the weekend' : null });
  }
  await tx.insert(roomTemperatureLogs).values(temps);
  // Allowed room range per instrument: 18–25 °C for a benchtop reader is the trade example (common practice, no source);
  // the analyzers' ranges are invented for the demo.
  const ranges: Record<string, [number, number]> = { 'crp-reader': [18, 25], 'chem-analyzer': [18, 28], 'hema-analyzer': [15, 30] };
  for (const inst of ctx.instruments) {
    const r = ranges[inst.code];
    if (r) await tx.update(instruments).set({ operatingMinC: r[0], operatingMaxC: r[1] }).where(eq(instruments.id, inst.id));
  }

  await tx.insert(qualityGoals).values(
    ctx.instruments.flatMap((inst) =>
      inst.tests.map((t) => ({
        clinicId,
        analyte: t.code,
        teaPercent: t.tea,
        updatedBy: adminId,
        source:
          t.code === 'cCRP'
            ? 'Clinic choice (no published veterinary TEa for CRP known to us): 20 %, to be reviewed.'
            : `ASVCP allowable total error guideline (${inst.code === 'hema-analyzer' ? 'Vet Clin Pathol 2018;47:9–21' : 'Vet Clin Pathol 2013;42:424–436'}); value from memory, verify.`,
      })),
    ),
  );

  const audit: (typeof auditEvents.$inferInsert)[] = [];
  for (const inst of ctx.instruments) {
    for (const [ti, test] of inst.tests.entries()) {
      // The previous lot (used up) and the current one, opened 5 days ago and loaded in the instrument.
      const testsPerKit = inst.code === 'crp-reader' ? 20 : 100;
      const [previous, current] = await tx
        .insert(kitLots)
        .values([
          { clinicId, analyte: test.code, lotNumber: `${test.code}-L${2609 + ti}`, expiresOn: isoDay(now + 40 * DAY), testsPerKit, kits: 2, openedOn: isoDay(now - 30 * DAY), storageNotes: '2–8 °C', instrumentId: null, finishedAt: new Date(now - 5 * DAY), createdBy: techId },
          {
            clinicId,
            analyte: test.code,
            lotNumber: `${test.code}-L${2611 + ti}`,
            // The CRP lot runs short and expires soon, so the demo shows both warnings.
            expiresOn: isoDay(now + (inst.code === 'crp-reader' ? 18 : 120) * DAY),
            testsPerKit,
            kits: inst.code === 'crp-reader' ? 1 : 2,
            openedOn: isoDay(now - 5 * DAY),
            storageNotes: inst.code === 'crp-reader' ? '2–8 °C; let the cartridge reach room temperature for 15 min' : '2–8 °C, opened pack stable 30 days (insert)',
            instrumentId: inst.id,
            lowAt: 5,
            createdBy: techId,
          },
        ])
        .returning();
      // Patient runs on the instrument since the lot was opened used it too.
      await tx
        .update(readings)
        .set({ kitLotId: current.id })
        .where(and(eq(readings.clinicId, clinicId), eq(readings.instrumentId, inst.id), eq(readings.analyte, test.code), gte(readings.receivedAt, new Date(now - 5 * DAY))));
      const materials = await tx
        .insert(controlMaterials)
        .values(
          test.levels.map(([mean, sd], li) => ({
            clinicId,
            analyte: test.code,
            instrumentId: inst.id,
            name: inst.code === 'hema-analyzer' ? 'Haematology control' : inst.code === 'crp-reader' ? 'CRP control' : 'Chemistry control',
            lotNumber: `QC-${2610 + ti}`,
            level: String(li + 1),
            sampleId: `QC-${test.code}-${li + 1}`,
            unit: test.unit,
            targetMean: mean,
            targetSd: sd,
            targetSource: 'insert' as const,
            expiresOn: isoDay(now + 90 * DAY),
            createdBy: techId,
          })),
        )
        .returning();
      const qc: (typeof readings.$inferInsert)[] = [];
      for (let d = DAYS; d >= 1; d--) {
        const at = new Date(now - d * DAY - 2 * 3_600_000);
        for (const [li, m] of materials.entries()) {
          // Level 2 runs the pattern the other way round, so the two levels do not drift together.
          let z = li === 0 ? PATTERN[(DAYS - d + ti) % PATTERN.length] : -PATTERN[(DAYS - d + ti + 3) % PATTERN.length];
          const rejected = test.code === 'cCRP' && d === 6 && li === 1;
          if (rejected) z = 3.4; // the demo's rejected run: 1-3s on CRP level 2
          if (test.code === 'GLU' && d === 9 && li === 0) z = 2.3; // a 1-2s warning only
          qc.push(qcReading(m, z, at, d > 5 ? previous.id : current.id, `${d}-${li}`));
          if (rejected) {
            // The rerun after fresh control was opened, 40 min later: in control, so QC is accepted again.
            qc.push(qcReading(m, 0.3, new Date(at.getTime() + 40 * 60_000), current.id, `${d}-${li}-rerun`));
          }
        }
      }
      const rows = await tx.insert(readings).values(qc).returning({ id: readings.id, at: readings.receivedAt });
      for (const r of rows) {
        audit.push({ clinicId, at: r.at, actorBridgeId: bridgeId, action: 'reading.received', entityType: 'reading', entityId: r.id, details: { demo: true } });
        audit.push({ clinicId, at: r.at, actorBridgeId: bridgeId, action: 'reading.marked-control', entityType: 'reading', entityId: r.id, details: { how: 'sample-id pattern', demo: true } });
      }

      function qcReading(m: (typeof materials)[number], z: number, at: Date, lotId: string, key: string): typeof readings.$inferInsert {
        const value = round(m.targetMean + z * m.targetSd, test.decimals + 1);
        return {
          clinicId,
          bridgeId,
          idempotencyKey: `seed-qc-${test.code}-${key}`,
          instrumentId: inst.id,
          instrumentCode: inst.code,
          instrumentSerial: inst.serial,
          analyte: test.code,
          value,
          unit: test.unit,
          sampleId: m.sampleId,
          measuredAt: at,
          receivedAt: at,
          raw: `(demo QC) ${m.sampleId} ${test.code} ${value} ${test.unit}\n`,
          status: 'control',
          controlMaterialId: m.id,
          kitLotId: lotId,
        };
      }
    }
  }
  for (let i = 0; i < audit.length; i += 500) await tx.insert(auditEvents).values(audit.slice(i, i + 500));

  // A verified reference interval: 20 healthy dogs of the clinic on the CRP reader, one above the limit (invented).
  const [interval] = await tx
    .select()
    .from(referenceIntervals)
    .where(and(eq(referenceIntervals.clinicId, clinicId), eq(referenceIntervals.analyte, 'cCRP'), eq(referenceIntervals.species, 'dog')));
  if (interval) {
    const values = [2.1, 3.4, 1.2, 4.8, 0.9, 2.7, 5.6, 3.1, 1.8, 6.2, 2.4, 0.7, 3.9, 4.1, 1.5, 11.8, 2.9, 3.3, 1.1, 7.4];
    const [row] = await tx
      .insert(intervalVerifications)
      .values({
        clinicId,
        intervalId: interval.id,
        analyte: interval.analyte,
        species: interval.species,
        unit: interval.unit,
        low: interval.low,
        high: interval.high,
        intervalSource: interval.source,
        values,
        decision: 'accepted',
        note: 'Twenty healthy adult dogs seen for vaccination, no signs of inflammation (demo data).',
        performedBy: techId,
        performedAt: new Date(today.getTime() - 12 * DAY),
      })
      .returning();
    await tx.insert(auditEvents).values({ clinicId, at: row.performedAt, actorUserId: techId, action: 'reference-interval.verified', entityType: 'interval_verification', entityId: row.id, details: { decision: 'accepted', outside: 1, demo: true } });
  }
}

export const DEMO_QUALITY_TESTS = { CRP, CHEMISTRY, HEMATOLOGY };
