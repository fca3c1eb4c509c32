// Replays a recorded (or simulated) day through the matcher as Intake would have seen it, and scores
// the suggestions against what the technician finally chose. Pure: used by `npm run match -- replay`,
// the clinic-day benchmark and the Admin matching report.
import { learnTiming, suggestMatch, type MatchContext, type MatchOrder, type Suggestion } from './matching';

export interface ReplayDay {
  timeZone: string;
  instruments: { id: string; name: string; channels: number }[];
  patients: { id: string; species: string; name?: string; recordNumber?: string }[];
  orders: { id: string; patientId: string; analyte: string; instrumentId: string | null; startedAt: Date; sampleId?: string | null; runSeconds?: number; closedAt?: Date | null }[];
  readings: {
    id: string;
    instrumentId: string;
    analyte: string;
    sampleId: string | null;
    patientRef: string | null;
    arrivedAt: Date;
    assignedOrderId: string | null;
  }[];
}

export interface ReplayLine {
  readingId: string;
  candidates: { orderId: string; probability: number }[];
  confident: boolean;
}

export interface ReplaySummary {
  readings: number;
  /** Readings whose best suggestion (an order, or none when "none of these" is likeliest) was the one kept. */
  top1: number;
  /** Confident suggestions that were not the order kept. */
  confidentWrong: number;
  /** Readings with no confident suggestion: the technician was asked to choose. */
  askedToChoose: number;
}

export interface ReplayResult {
  lines: ReplayLine[];
  summary: ReplaySummary;
  /** Every suggestion with what was kept, for reliability tables and reports. */
  scored: { readingId: string; suggestion: Suggestion; kept: string | null }[];
}

/** The best guess of a suggestion: its top order, or null when "none of these" is at least as likely. */
/** Confirmed matches the timing is learned from: the most recent, so a new shift's habits show soon. */
export const RECENT = 100;

export function bestGuess(s: Suggestion): string | null {
  const top = s.candidates.find((c) => c.orderId);
  return top && top.probability > s.noneProbability ? top.orderId : null;
}

/**
 * Readings in arrival order; an order is visible once started and leaves the open set once the reading
 * assigned to it has been seen (orders never assigned stay open). The clinic's timing is learned as the
 * day goes, from the matches already confirmed. `runSeconds` gives each test's protocol duration.
 */
export function replayDay(day: ReplayDay, runSeconds: (analyte: string) => number, analytes: MatchContext['analytes'] = []): ReplayResult {
  const readings = [...day.readings].sort((a, b) => a.arrivedAt.getTime() - b.arrivedAt.getTime() || a.id.localeCompare(b.id));
  const orders: MatchOrder[] = day.orders.map((o) => ({
    id: o.id,
    patientId: o.patientId,
    analyte: o.analyte,
    instrumentId: o.instrumentId,
    sampleId: o.sampleId ?? null,
    startedAt: o.startedAt,
    runSeconds: o.runSeconds ?? runSeconds(o.analyte),
  }));
  const byId = new Map(orders.map((o) => [o.id, o]));
  // Closed (aborted or cancelled) by a person at a known time: out of the open set from then on.
  const closedAt = new Map(day.orders.filter((o) => o.closedAt).map((o) => [o.id, o.closedAt!.getTime()]));
  const patients = day.patients.map((p) => ({ id: p.id, species: p.species, name: p.name ?? p.id, recordNumber: p.recordNumber ?? p.id }));
  const closed = new Set<string>();
  const offsets: number[] = [];
  const placed: NonNullable<MatchContext['placed']> = [];
  const lines: ReplayLine[] = [];
  const scored: ReplayResult['scored'] = [];
  const summary: ReplaySummary = { readings: 0, top1: 0, confidentWrong: 0, askedToChoose: 0 };

  for (const r of readings) {
    const t = r.arrivedAt.getTime();
    const open = orders.filter((o) => !closed.has(o.id) && o.startedAt.getTime() <= t && !((closedAt.get(o.id) ?? Infinity) <= t));
    const suggestion = suggestMatch(r, {
      orders: open,
      patients,
      instruments: day.instruments,
      analytes,
      placed,
      timing: learnTiming(offsets.slice(-RECENT)),
      now: r.arrivedAt,
      timeZone: day.timeZone,
    });
    const kept = r.assignedOrderId;
    const guess = bestGuess(suggestion);
    summary.readings += 1;
    if (guess === kept) summary.top1 += 1;
    if (suggestion.confident && suggestion.candidates[0].orderId !== kept) summary.confidentWrong += 1;
    if (!suggestion.confident) summary.askedToChoose += 1;
    lines.push({
      readingId: r.id,
      candidates: suggestion.candidates.filter((c) => c.orderId).map((c) => ({ orderId: c.orderId!, probability: Math.round(c.probability * 1e6) / 1e6 })),
      confident: suggestion.confident,
    });
    scored.push({ readingId: r.id, suggestion, kept });

    placed.push({ instrumentId: r.instrumentId, arrivedAt: r.arrivedAt, startedAt: kept ? (byId.get(kept)?.startedAt ?? null) : null });
    if (kept) {
      closed.add(kept);
      const order = byId.get(kept);
      if (order) offsets.push((t - order.startedAt.getTime()) / 1000 - order.runSeconds);
    }
  }
  return { lines, summary, scored };
}

/** Predicted probability against how often it was right, in bins, over every candidate offered. */
export function reliabilityTable(scored: ReplayResult['scored'], edges = [0, 0.2, 0.5, 0.8, 0.9, 0.97, 0.99, 1.0000001]) {
  const bins = edges.slice(0, -1).map((from, i) => ({ from, to: Math.min(1, edges[i + 1]), n: 0, predicted: 0, observed: 0 }));
  for (const { suggestion, kept } of scored) {
    const options: { id: string | null; p: number }[] = [
      ...suggestion.candidates.filter((c) => c.orderId).map((c) => ({ id: c.orderId, p: c.probability })),
      { id: null, p: suggestion.noneProbability },
    ];
    for (const o of options) {
      if (o.p < 0.01) continue;
      const bin = bins.find((b, i) => o.p >= b.from && (o.p < edges[i + 1]));
      if (!bin) continue;
      bin.n += 1;
      bin.predicted += o.p;
      if (o.id === kept) bin.observed += 1;
    }
  }
  return bins.map((b) => ({ from: b.from, to: b.to, n: b.n, predicted: b.n ? b.predicted / b.n : null, observed: b.n ? b.observed / b.n : null }));
}
