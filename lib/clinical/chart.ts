import 'server-only';
import { and, eq, inArray, isNull } from 'drizzle-orm';
import { db } from '@/db/client';
import { patients, resultAlerts } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { notFound } from '@/lib/http';
import { qualityMarksFor } from '@/lib/quality/marks';
import { patientResults } from '@/lib/readings/queries';
import { analyteContexts, intervalContexts } from './config';
import { evaluateResult, pickInterval } from './evaluate';
import { changeBetween, deltaCheck } from './flags';
import { convert } from './units';
import { reviewsFor } from './review';

/**
 * A patient's results with what the veterinarian reads them by: the value in the clinic's unit, the flag
 * against the species' interval, the change from the previous result of the same test, the delta check,
 * and who reviewed it. Newest first, like patientResults.
 */
export async function patientChart(actor: Actor, patientId: string) {
  const database = await db();
  const [patient] = await database
    .select({ id: patients.id, name: patients.name, species: patients.species })
    .from(patients)
    .where(and(eq(patients.id, patientId), eq(patients.clinicId, actor.clinicId)));
  if (!patient) throw notFound('The patient');
  const results = await patientResults(actor, patientId);
  const codes = [...new Set(results.map((r) => r.analyte))];
  const [analytes, intervals, reviews, alerts, quality] = await Promise.all([
    analyteContexts(database, actor.clinicId, codes),
    intervalContexts(database, actor.clinicId, codes),
    reviewsFor(actor.clinicId, results.map((r) => r.id)),
    results.length
      ? database
          .select({ id: resultAlerts.id, readingId: resultAlerts.readingId, acknowledgedAt: resultAlerts.acknowledgedAt, message: resultAlerts.message })
          .from(resultAlerts)
          .where(and(inArray(resultAlerts.readingId, results.map((r) => r.id)), eq(resultAlerts.patientId, patientId), isNull(resultAlerts.withdrawnAt)))
      : Promise.resolve([]),
    qualityMarksFor(database, actor.clinicId, results),
  ]);

  const evaluated = results.map((r) => {
    const e = evaluateResult(r, patient, analytes.get(r.analyte), intervals);
    return { r, e, at: new Date(r.measuredAt ?? r.receivedAt) };
  });

  // Results are newest first: the previous result of the same test is the next one down with a value in
  // the same unit. One pass from the oldest keeps that linear for a long record.
  const previousOf = new Array<(typeof evaluated)[number] | undefined>(evaluated.length);
  const lastWithValue = new Map<string, (typeof evaluated)[number]>();
  for (let i = evaluated.length - 1; i >= 0; i--) {
    const x = evaluated[i];
    const key = `${x.r.analyte}\u0000${x.e.display.unit}`;
    previousOf[i] = lastWithValue.get(key);
    if (x.e.display.value !== null) lastWithValue.set(key, x);
  }
  const alertByReading = new Map(alerts.map((a) => [a.readingId, a]));

  const enriched = evaluated.map(({ r, e, at }, index) => {
    const analyte = analytes.get(r.analyte);
    const previous = previousOf[index];
    const change = previous ? changeBetween(previous.e.display, e.display, analyte?.decimals ?? 1, e.display.unit ?? '') : null;
    const delta =
      previous && analyte
        ? deltaCheck(
            { ...inAnalyteUnit(previous.e.display, analyte.unit), at: previous.at },
            { ...inAnalyteUnit(e.display, analyte.unit), at },
            { absolute: analyte.deltaAbsolute, percent: analyte.deltaPercent, windowHours: analyte.deltaWindowHours },
          )
        : null;
    const review = reviews.get(r.id) ?? [];
    const signoff = review.find((x) => x.kind === 'reviewed') ?? null;
    const alert = alertByReading.get(r.id) ?? null;
    return {
      ...r,
      /** Lab-quality marks (QC failed, expired kit, room temperature), kept apart from the clinical flags. */
      quality: quality.get(r.id) ?? [],
      clinical: {
        display: e.display,
        flag: e.flag,
        band: e.band,
        /** Whose interval the flag and band come from: the clinic's, or the range the analyzer sent. */
        interval: e.interval ? { origin: e.interval.origin, source: e.interval.source, low: e.interval.low, high: e.interval.high } : null,
        analyzerFlag: e.analyzerFlag,
        qualitative: e.qualitative,
        unitNote: e.unitNote,
        typedInBy: r.enteredByName,
        problems: e.problems,
        speciesWarning: e.speciesWarning,
        change: change ? { ...change, previousId: previous!.r.id } : null,
        delta: delta && delta.flagged ? delta : null,
        reviewed: signoff ? { by: signoff.reviewerName, at: signoff.at } : null,
        comments: review.filter((x) => x.kind === 'comment').map((x) => ({ by: x.reviewerName, at: x.at, comment: x.comment })),
        alert: alert ? { id: alert.id, acknowledged: alert.acknowledgedAt !== null, message: alert.message } : null,
      },
    };
  });

  const perAnalyte = Object.fromEntries(
    codes.map((code) => {
      const a = analytes.get(code);
      const interval = pickInterval(intervals, code, patient.species, null);
      // Without a clinic interval, the chart draws the latest range the analyzer sent for this test, labelled as such.
      const fromAnalyzer = interval ? null : enriched.find((x) => x.analyte === code && x.clinical.interval?.origin === 'analyzer')?.clinical.interval ?? null;
      const toDisplay = (v: number | null) => {
        if (v === null || !interval || !a) return v;
        const c = convert(v, interval.unit, a.displayUnit);
        return c.ok ? c.value : null;
      };
      return [
        code,
        {
          code,
          name: a?.name ?? code,
          unit: a?.displayUnit ?? enriched.find((x) => x.analyte === code)?.clinical.display.unit ?? null,
          decimals: a?.decimals ?? 1,
          speciesNote: a?.speciesNote ?? null,
          deltaSource: a?.deltaSource ?? null,
          interval: interval
            ? {
                low: toDisplay(interval.low),
                high: toDisplay(interval.high),
                criticalLow: toDisplay(interval.criticalLow),
                criticalHigh: toDisplay(interval.criticalHigh),
                source: interval.source,
                origin: 'clinic' as const,
              }
            : fromAnalyzer
              ? { low: fromAnalyzer.low, high: fromAnalyzer.high, criticalLow: null, criticalHigh: null, source: fromAnalyzer.source, origin: 'analyzer' as const }
              : null,
          /** Coded or text results: shown as a timeline of values, not a line plot. */
          qualitative: enriched.some((x) => x.analyte === code && x.clinical.qualitative !== null),
        },
      ];
    }),
  );
  return { results: enriched, analytes: perAnalyte };
}

/** Delta limits are kept in the analyte's own unit: compare there. */
function inAnalyteUnit(m: { value: number | null; comparator: '<' | '>' | null; unit: string | null }, unit: string) {
  if (m.value === null || !m.unit) return m;
  const c = convert(m.value, m.unit, unit);
  return c.ok ? { ...m, value: c.value } : m;
}

