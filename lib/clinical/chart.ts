import 'server-only';
import { and, eq, inArray, isNull } from 'drizzle-orm';
import { db } from '@/db/client';
import { patients, resultAlerts } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { notFound } from '@/lib/http';
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
  const [analytes, intervals, reviews, alerts] = await Promise.all([
    analyteContexts(database, actor.clinicId, codes),
    intervalContexts(database, actor.clinicId, codes),
    reviewsFor(actor.clinicId, results.map((r) => r.id)),
    results.length
      ? database
          .select({ id: resultAlerts.id, readingId: resultAlerts.readingId, acknowledgedAt: resultAlerts.acknowledgedAt, message: resultAlerts.message })
          .from(resultAlerts)
          .where(and(inArray(resultAlerts.readingId, results.map((r) => r.id)), eq(resultAlerts.patientId, patientId), isNull(resultAlerts.withdrawnAt)))
      : Promise.resolve([]),
  ]);

  const evaluated = results.map((r) => {
    const e = evaluateResult(r, patient, analytes.get(r.analyte), intervals);
    return { r, e, at: new Date(r.measuredAt ?? r.receivedAt) };
  });

  const enriched = evaluated.map(({ r, e, at }, index) => {
    const analyte = analytes.get(r.analyte);
    // Results are newest first: the previous result of the same test is the next one down with a value.
    const previous = evaluated.slice(index + 1).find((x) => x.r.analyte === r.analyte && x.e.display.value !== null && x.e.display.unit === e.display.unit);
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
    const alert = alerts.find((a) => a.readingId === r.id) ?? null;
    return {
      ...r,
      clinical: {
        display: e.display,
        flag: e.flag,
        band: e.band,
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
              }
            : null,
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

