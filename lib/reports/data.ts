import 'server-only';
import { eq } from 'drizzle-orm';
import { db } from '@/db/client';
import { clinics } from '@/db/schema';
import type { Actor } from '@/lib/auth/guards';
import { patientChart } from '@/lib/clinical/chart';
import { formatMeasured, qualitativeFlag } from '@/lib/clinical/evaluate';
import { FLAG_CODE } from '@/lib/clinical/flags';
import { formatValue } from '@/lib/format';
import { ApiError } from '@/lib/http';
import { getPatient } from '@/lib/patients';

// What a result report holds: one patient, one visit (the calendar day in the clinic's time zone on which
// the results were measured), each result with its unit, interval, flag, the trend of the same test
// over earlier visits, the veterinarians' comments and sign-off. The PDF and the e-mail are drawn from this.

/** The visit day of an instant in a time zone, as YYYY-MM-DD. */
export function visitDay(at: Date, timeZone: string): string {
  // en-CA formats as YYYY-MM-DD (ISO 8601 calendar date).
  return new Intl.DateTimeFormat('en-CA', { timeZone, year: 'numeric', month: '2-digit', day: '2-digit' }).format(at);
}

export interface ReportResult {
  id: string;
  analyte: string;
  name: string;
  value: string;
  unit: string | null;
  interval: string;
  flag: string | null;
  flagText: string | null;
  measuredAt: Date;
  instrument: string | null;
  status: string | null;
  reviewedBy: string | null;
  reviewedAt: Date | null;
  comments: { by: string; at: Date; comment: string }[];
  speciesWarning: string | null;
  /** Comments the analyzer sent with the result (HL7 NTE, ASTM C). */
  notes: string[];
  /** Earlier and this visit's results of the same test, oldest first (at most 8). */
  trend: { at: Date; value: number | null; text: string }[];
}

export interface ReportData {
  clinic: { name: string; timeZone: string };
  patient: Awaited<ReturnType<typeof getPatient>>;
  visitDate: string;
  results: ReportResult[];
  /** True when every result of the visit is signed off by a veterinarian. */
  reviewed: boolean;
  generatedAt: Date;
}

const fmtLimit = (v: number | null, decimals: number) => (v === null ? null : v.toFixed(decimals));

export async function reportData(actor: Actor, patientId: string, visitDate?: string): Promise<ReportData> {
  const database = await db();
  const [clinic] = await database.select({ name: clinics.name, timeZone: clinics.timeZone }).from(clinics).where(eq(clinics.id, actor.clinicId));
  const patient = await getPatient(actor, patientId);
  const chart = await patientChart(actor, patientId);
  const day = (r: { measuredAt: Date | string | null; receivedAt: Date | string }) => visitDay(new Date(r.measuredAt ?? r.receivedAt), clinic.timeZone);
  const visits = [...new Set(chart.results.map(day))];
  const visit = visitDate ?? visits[0];
  if (!visit) throw new ApiError(404, 'no_results', 'This patient has no results on the record yet.');
  const onVisit = chart.results.filter((r) => day(r) === visit);
  if (!onVisit.length) throw new ApiError(404, 'no_results_on_visit', `No results on ${visit} for this patient.`);
  const results: ReportResult[] = onVisit
    .slice()
    .reverse()
    .map((r) => {
      const a = chart.analytes[r.analyte];
      const decimals = a?.decimals ?? 1;
      const shown = (x: (typeof onVisit)[number]) =>
        x.clinical.qualitative ? formatValue({ value: null, comparator: null, unit: null, valueCode: x.valueCode, valueText: x.valueText }) : formatMeasured({ ...x.clinical.display, unit: null }, decimals);
      const low = fmtLimit(a?.interval?.low ?? null, decimals);
      const high = fmtLimit(a?.interval?.high ?? null, decimals);
      const interval = low !== null && high !== null ? `${low}–${high}` : low !== null ? `from ${low}` : high !== null ? `up to ${high}` : 'none set';
      const at = new Date(r.measuredAt ?? r.receivedAt);
      const trend = chart.results
        .filter((x) => x.analyte === r.analyte && new Date(x.measuredAt ?? x.receivedAt) <= at && x.clinical.display.unit === r.clinical.display.unit)
        .slice(0, 8)
        .reverse()
        .map((x) => ({ at: new Date(x.measuredAt ?? x.receivedAt), value: x.clinical.display.value, text: shown(x) }));
      // A coded or text result is printed as sent, with A/N when the analyzer's flag or the clinic's rule says.
      const q = r.clinical.qualitative;
      return {
        id: r.id,
        analyte: r.analyte,
        name: a?.name ?? r.analyte,
        value: shown(r),
        unit: q ? null : r.clinical.display.unit,
        interval: q ? (r.instrumentRange ? `${r.instrumentRange} (analyzer)` : 'n/a') : interval,
        flag: q ? qualitativeFlag(q) : r.clinical.flag ? `${FLAG_CODE[r.clinical.flag.flag]}${r.clinical.flag.certain ? '' : '?'}` : null,
        flagText: q ? q.basis : (r.clinical.flag?.text ?? null),
        notes: r.notes ?? [],
        measuredAt: at,
        instrument: r.instrumentName ?? r.instrumentCode ?? null,
        status: r.resultStatus ?? null,
        reviewedBy: r.clinical.reviewed?.by ?? null,
        reviewedAt: r.clinical.reviewed ? new Date(r.clinical.reviewed.at) : null,
        comments: r.clinical.comments.filter((c) => c.comment).map((c) => ({ by: c.by, at: new Date(c.at), comment: c.comment! })),
        speciesWarning: r.clinical.speciesWarning ?? null,
        trend,
      };
    });
  return { clinic, patient, visitDate: visit, results, reviewed: results.every((r) => r.reviewedBy !== null), generatedAt: new Date() };
}

/** The patient's visit days with results, newest first. */
export async function patientVisits(actor: Actor, patientId: string) {
  const database = await db();
  const [clinic] = await database.select({ timeZone: clinics.timeZone }).from(clinics).where(eq(clinics.id, actor.clinicId));
  const chart = await patientChart(actor, patientId);
  const byDay = new Map<string, { visitDate: string; results: number; reviewed: number }>();
  for (const r of chart.results) {
    const d = visitDay(new Date(r.measuredAt ?? r.receivedAt), clinic.timeZone);
    const entry = byDay.get(d) ?? { visitDate: d, results: 0, reviewed: 0 };
    entry.results += 1;
    if (r.clinical.reviewed) entry.reviewed += 1;
    byDay.set(d, entry);
  }
  return [...byDay.values()];
}
