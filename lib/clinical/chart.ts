import 'server-only';
import { and, eq, isNull } from 'drizzle-orm';
import { inJsonList } from '@/lib/bulk-select';
import { db } from '@/db/client';
import { patients, resultAlerts } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { notFound } from '@/lib/http';
import { qualityMarksFor } from '@/lib/quality/marks';
import { patientResultSummaries, patientResults, patientResultsPage, type ResultSummary } from '@/lib/readings/queries';
import { analyteContexts, intervalContexts } from './config';
import { evaluateResult, pickInterval } from './evaluate';
import { changeBetween, deltaCheck } from './flags';
import { convert } from './units';
import { reviewsFor } from './review';

/**
 * A patient's results with what the veterinarian reads them by: the value in the clinic's unit, the flag
 * against the species' interval, the change from the previous result of the same test, the delta check,
 * and who reviewed it. Newest first, like patientResults.
 *
 * Every result is evaluated, for the trend (`trend`: one small point per result) and for the change from
 * the previous one, from the columns evaluation needs; only the newest `limit` are read whole, enriched
 * with reviews, alerts and lab-quality marks and sent (`results`; `total` says how many there are). A page
 * never ends inside a specimen, so a panel's results stay together. Without `limit` every result is read
 * and sent whole (reports).
 */
export async function patientChart(actor: Actor, patientId: string, options: { limit?: number } = {}) {
  const database = await db();
  const [patient] = await database
    .select({ id: patients.id, name: patients.name, species: patients.species })
    .from(patients)
    .where(and(eq(patients.id, patientId), eq(patients.clinicId, actor.clinicId)));
  if (!patient) throw notFound('The patient');
  const whole = options.limit === undefined ? await patientResults(actor, patientId) : null;
  const all: ResultSummary[] = whole ?? (await patientResultSummaries(actor, patientId));
  const codes = [...new Set(all.map((r) => r.analyte))];
  const [analytes, intervals] = await Promise.all([analyteContexts(database, actor.clinicId, codes), intervalContexts(database, actor.clinicId, codes)]);

  const evaluated = all.map((r) => {
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
  // Each result's change from the previous one, for its trend point and, on the page, its row.
  const changes = evaluated.map(({ r, e }, index) => {
    const previous = previousOf[index];
    return previous ? changeBetween(previous.e.display, e.display, analytes.get(r.analyte)?.decimals ?? 1, e.display.unit ?? '') : null;
  });

  let shown = options.limit === undefined ? evaluated.length : Math.min(options.limit, evaluated.length);
  const lastSpecimen = shown > 0 ? evaluated[shown - 1].r.specimenId : null;
  while (lastSpecimen && shown < evaluated.length && evaluated[shown].r.specimenId === lastSpecimen) shown++;
  // The page's rows whole, read in the same order. A result voided or moved in between is left off the page
  // (the next refetch drops it from the trend too); a reading's value is never changed in place.
  const wholeRows = whole ? whole.slice(0, shown) : await patientResultsPage(actor, patientId, shown);
  const wholeById = new Map(wholeRows.map((r) => [r.id, r]));
  const page = evaluated.slice(0, shown).flatMap((x, index) => {
    const r = wholeById.get(x.r.id);
    return r ? [{ ...x, r, index }] : [];
  });
  const results = page.map((x) => x.r);

  const [reviews, alerts, quality] = await Promise.all([
    reviewsFor(actor.clinicId, results.map((r) => r.id)),
    results.length
      ? database
          .select({ id: resultAlerts.id, readingId: resultAlerts.readingId, acknowledgedAt: resultAlerts.acknowledgedAt, message: resultAlerts.message })
          .from(resultAlerts)
          .where(and(inJsonList(resultAlerts.readingId, results.map((r) => r.id)), eq(resultAlerts.patientId, patientId), isNull(resultAlerts.withdrawnAt)))
      : Promise.resolve([]),
    qualityMarksFor(database, actor.clinicId, results),
  ]);
  const alertByReading = new Map(alerts.map((a) => [a.readingId, a]));

  const enriched = page.map(({ r, e, at, index }) => {
    const analyte = analytes.get(r.analyte);
    const previous = previousOf[index];
    const change = changes[index];
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

  /** One point per result, every result: what a trend line or a qualitative timeline draws. */
  const trend = evaluated.map(({ r, e, at }, index) => ({
    id: r.id,
    analyte: r.analyte,
    at,
    display: e.display,
    qualitative: e.qualitative,
    /** Outside the interval by our flag or the analyzer's. */
    flagged: (!!e.flag && e.flag.flag !== 'normal') || !!e.analyzerFlag?.abnormal,
    change: changes[index]?.text ?? null,
  }));

  const perAnalyte = Object.fromEntries(
    codes.map((code) => {
      const a = analytes.get(code);
      const interval = pickInterval(intervals, code, patient.species, null);
      // Without a clinic interval, the chart draws the latest range the analyzer sent for this test, labelled as such.
      const fromAnalyzer = interval ? null : evaluated.find((x) => x.r.analyte === code && x.e.interval?.origin === 'analyzer')?.e.interval ?? null;
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
          unit: a?.displayUnit ?? evaluated.find((x) => x.r.analyte === code)?.e.display.unit ?? null,
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
          qualitative: evaluated.some((x) => x.r.analyte === code && x.e.qualitative !== null),
        },
      ];
    }),
  );
  return { results: enriched, total: evaluated.length, trend, analytes: perAnalyte };
}

/** Delta limits are kept in the analyte's own unit: compare there. */
function inAnalyteUnit(m: { value: number | null; comparator: '<' | '>' | null; unit: string | null }, unit: string) {
  if (m.value === null || !m.unit) return m;
  const c = convert(m.value, m.unit, unit);
  return c.ok ? { ...m, value: c.value } : m;
}

