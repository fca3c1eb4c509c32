// Ranked match suggestions for a reading that arrived without a patient. Pure: the caller loads the
// reading, the open orders, their patients, instruments and analytes; this module only weighs evidence
// and says why, in the clinic's words. It never decides on its own: see autoAssignTarget for the one rule that may.
import { formatDuration } from './protocols';

export interface MatchReading {
  id: string;
  analyte: string;
  instrumentId: string | null;
  sampleId: string | null;
  patientRef: string | null;
  /** When the reading reached the bridge: what the due time is compared with. */
  arrivedAt: Date;
}

export interface MatchOrder {
  id: string;
  patientId: string;
  analyte: string;
  instrumentId: string | null;
  sampleId: string | null;
  startedAt: Date;
  dueAt: Date;
  status: 'open' | 'fulfilled' | 'aborted' | 'cancelled';
  /** Tolerance around the due time, from the run protocol. */
  earlySeconds: number;
  lateSeconds: number;
}

export interface MatchPatient {
  id: string;
  name: string;
  recordNumber: string;
  species: string;
}

export interface MatchInstrument {
  id: string;
  name: string;
  channels: number;
}

export interface MatchAnalyte {
  code: string;
  validatedSpecies: string[];
}

export interface MatchInput {
  reading: MatchReading;
  orders: MatchOrder[];
  patients: MatchPatient[];
  instruments: MatchInstrument[];
  analytes: MatchAnalyte[];
  /** The clinic's time zone, for the times written in reasons (IANA name); UTC when absent. */
  timeZone?: string;
}

export type ReasonCode =
  | 'sample-id-match'
  | 'sample-id-differs'
  | 'id-names-other'
  | 'record-id-match'
  | 'analyte-match'
  | 'instrument-match'
  | 'instrument-differs'
  | 'instrument-unknown'
  | 'on-time'
  | 'too-early'
  | 'late'
  | 'first-in-line'
  | 'not-first-in-line'
  | 'species-validated'
  | 'species-not-validated'
  | 'no-order'
  | 'another-reading-fits';

export interface Reason {
  code: ReasonCode;
  points: number;
  text: string;
}

export interface Candidate {
  patientId: string;
  patientName: string;
  recordNumber: string;
  orderId: string | null;
  score: number;
  reasons: Reason[];
  /** exact: an ID printed on the reading matches; the others by score. */
  strength: 'exact' | 'strong' | 'possible' | 'weak';
  /** How many other candidates have the same score: a tie is shown as one, never broken silently. */
  tiedWith: number;
  speciesWarning: string | null;
}

/** Points per piece of evidence. Exact IDs outweigh everything; timing and instrument come next. */
export const POINTS = {
  sampleIdMatch: 100,
  sampleIdDiffers: -60,
  idNamesOther: -60,
  recordIdMatch: 80,
  analyteMatch: 20,
  instrumentMatch: 15,
  instrumentDiffers: -40,
  onTimeBest: 40,
  onTimeWorst: 20,
  tooEarly: -50,
  late: 0,
  firstInLine: 10,
  notFirstInLine: -30,
  speciesValidated: 5,
  speciesNotValidated: -25,
  anotherReadingFits: -45,
} as const;

const sameId = (a: string | null | undefined, b: string | null | undefined) =>
  !!a && !!b && a.trim().toLowerCase() === b.trim().toLowerCase();

type Clock = (d: Date) => string;
// One formatter per time zone: building an Intl formatter per reason dominated the ranking's cost.
const clocks = new Map<string, Clock>();
const clockIn = (timeZone = 'UTC'): Clock => {
  let clock = clocks.get(timeZone);
  if (!clock) {
    const format = new Intl.DateTimeFormat('en-GB', { timeZone, hour: '2-digit', minute: '2-digit', second: '2-digit' });
    clock = (d) => format.format(d);
    clocks.set(timeZone, clock);
  }
  return clock;
};

const speciesName: Record<string, string> = { dog: 'dogs', cat: 'cats', rabbit: 'rabbits', ferret: 'ferrets', bird: 'birds', reptile: 'reptiles' };
const aSpecies: Record<string, string> = { dog: 'a dog', cat: 'a cat', rabbit: 'a rabbit', ferret: 'a ferret', bird: 'a bird', reptile: 'a reptile', other: 'of another species' };

/** A plain warning when the analyte is validated for other species than the patient's; null otherwise. */
export function speciesWarning(analyte: MatchAnalyte | undefined, patient: Pick<MatchPatient, 'name' | 'species'>): string | null {
  if (!analyte || analyte.validatedSpecies.length === 0 || analyte.validatedSpecies.includes(patient.species)) return null;
  const validated = analyte.validatedSpecies.map((s) => speciesName[s] ?? s).join(' and ');
  return `${analyte.code} is validated for ${validated}; ${patient.name} is ${aSpecies[patient.species] ?? patient.species}. Interpret with care.`;
}

function timingReason(reading: MatchReading, order: MatchOrder, clock: Clock): Reason {
  const diff = (reading.arrivedAt.getTime() - order.dueAt.getTime()) / 1000;
  const tolerance = `tolerance ${formatDuration(order.earlySeconds)} early to ${formatDuration(order.lateSeconds)} late`;
  if (diff < -order.earlySeconds) {
    return {
      code: 'too-early',
      points: POINTS.tooEarly,
      text: `Arrived ${formatDuration(-diff)} before this run was due (${clock(order.dueAt)}): too early to be its reading.`,
    };
  }
  if (diff > order.lateSeconds) {
    return {
      code: 'late',
      points: POINTS.late,
      text: `Arrived ${formatDuration(diff)} after this run was due (${tolerance}); possible only if the reading was taken late.`,
    };
  }
  const side = diff < 0 ? order.earlySeconds : order.lateSeconds;
  const closeness = side === 0 ? 1 : 1 - Math.abs(diff) / side;
  const points = Math.round(POINTS.onTimeWorst + (POINTS.onTimeBest - POINTS.onTimeWorst) * closeness);
  const when = Math.abs(diff) < 1 ? 'right at the due time' : `${formatDuration(diff)} ${diff < 0 ? 'before' : 'after'} the due time`;
  return { code: 'on-time', points, text: `Arrived ${when} (${clock(order.dueAt)}; ${tolerance}).` };
}

/** Orders this reading could be the result of: open, same test, a known patient, started before it arrived. */
function openOrdersFor(reading: MatchReading, orders: MatchOrder[], patients: Map<string, MatchPatient>): MatchOrder[] {
  return orders.filter(
    (o) => o.status === 'open' && o.analyte === reading.analyte && patients.has(o.patientId) && o.startedAt.getTime() <= reading.arrivedAt.getTime(),
  );
}

/**
 * Ranks candidate orders (and patients named by an ID on the reading) for one reading, best first:
 * candidates named by an exact ID first, then by score; equal scores are reported as ties.
 * Orders for another analyte, closed orders and runs started after the reading arrived are left out.
 */
export function rankCandidates(input: MatchInput): Candidate[] {
  const { reading } = input;
  const clock = clockIn(input.timeZone);
  const patients = new Map(input.patients.map((p) => [p.id, p]));
  const instruments = new Map(input.instruments.map((i) => [i.id, i]));
  const analyte = input.analytes.find((a) => a.code === reading.analyte);
  const eligible = openOrdersFor(reading, input.orders, patients);

  const candidates: Omit<Candidate, 'tiedWith' | 'strength'>[] = [];
  const speciesReason = (patient: MatchPatient): Reason | null => {
    const warning = speciesWarning(analyte, patient);
    if (warning) return { code: 'species-not-validated', points: POINTS.speciesNotValidated, text: warning };
    if (analyte && analyte.validatedSpecies.length > 0) {
      return { code: 'species-validated', points: POINTS.speciesValidated, text: `${analyte.code} is validated for ${speciesName[patient.species] ?? patient.species}.` };
    }
    return null;
  };
  const recordIdReason = (patient: MatchPatient): Reason | null => {
    const printed = [reading.patientRef, reading.sampleId].find((id) => sameId(id, patient.recordNumber));
    return printed
      ? { code: 'record-id-match', points: POINTS.recordIdMatch, text: `The reading names record ${printed.trim()}, this patient's record number.` }
      : null;
  };

  // IDs printed on the reading that name a test or a patient: evidence against every other candidate.
  const namedOrders = eligible.filter((o) => sameId(reading.sampleId, o.sampleId));
  const namedPatients = input.patients.filter((p) => sameId(reading.patientRef, p.recordNumber) || sameId(reading.sampleId, p.recordNumber));
  const namedElsewhere = (order: MatchOrder, patient: MatchPatient): Reason | null => {
    if (namedOrders.some((o) => o.id === order.id) || namedPatients.some((p) => p.id === patient.id)) return null;
    const other = namedOrders[0] ? patients.get(namedOrders[0].patientId) : namedPatients[0];
    if (!other) return null;
    return { code: 'id-names-other', points: POINTS.idNamesOther, text: `The ID printed on the reading names ${other.name} (${other.recordNumber}), not this patient.` };
  };

  for (const order of eligible) {
    const patient = patients.get(order.patientId)!;
    const reasons: Reason[] = [];
    const elsewhere = namedElsewhere(order, patient);
    if (elsewhere) reasons.push(elsewhere);
    if (sameId(reading.sampleId, order.sampleId)) {
      reasons.push({ code: 'sample-id-match', points: POINTS.sampleIdMatch, text: `Sample ID ${reading.sampleId!.trim()} on the reading matches this order's tube label.` });
    } else if (reading.sampleId && order.sampleId && !sameId(reading.sampleId, patient.recordNumber)) {
      reasons.push({
        code: 'sample-id-differs',
        points: POINTS.sampleIdDiffers,
        text: `The reading's sample ID ${reading.sampleId.trim()} differs from this order's tube label ${order.sampleId.trim()}.`,
      });
    }
    const record = recordIdReason(patient);
    if (record) reasons.push(record);
    reasons.push({ code: 'analyte-match', points: POINTS.analyteMatch, text: `Ordered test ${order.analyte} is the test on the reading.` });

    const instrument = order.instrumentId ? instruments.get(order.instrumentId) : undefined;
    if (!order.instrumentId) {
      reasons.push({ code: 'instrument-unknown', points: 0, text: 'No instrument was chosen when the test was started.' });
    } else if (order.instrumentId === reading.instrumentId) {
      reasons.push({ code: 'instrument-match', points: POINTS.instrumentMatch, text: `Started on ${instrument?.name ?? 'this instrument'}, the one that sent the reading.` });
    } else {
      reasons.push({
        code: 'instrument-differs',
        points: POINTS.instrumentDiffers,
        text: `Started on ${instrument?.name ?? 'another instrument'}, not the one that sent the reading.`,
      });
    }

    reasons.push(timingReason(reading, order, clock));

    // One run at a time on a single-channel instrument: runs finish in the order they started.
    if (instrument && instrument.channels === 1 && order.instrumentId === reading.instrumentId) {
      const earlier = eligible
        .filter((o) => o.id !== order.id && o.instrumentId === order.instrumentId && o.startedAt.getTime() < order.startedAt.getTime())
        .sort((a, b) => a.startedAt.getTime() - b.startedAt.getTime())[0];
      if (earlier) {
        const other = patients.get(earlier.patientId)!;
        reasons.push({
          code: 'not-first-in-line',
          points: POINTS.notFirstInLine,
          text: `${other.name}'s run on ${instrument.name} started earlier (${clock(earlier.startedAt)}) and, one run at a time, finishes first.`,
        });
      } else {
        reasons.push({ code: 'first-in-line', points: POINTS.firstInLine, text: `The earliest open run on ${instrument.name} (one run at a time: first started, first finished).` });
      }
    }

    const species = speciesReason(patient);
    if (species) reasons.push(species);
    candidates.push({
      patientId: patient.id,
      patientName: patient.name,
      recordNumber: patient.recordNumber,
      orderId: order.id,
      score: reasons.reduce((s, r) => s + r.points, 0),
      reasons,
      speciesWarning: speciesWarning(analyte, patient),
    });
  }

  // A record number printed on the reading names a patient even without an open order.
  for (const patient of input.patients) {
    const record = recordIdReason(patient);
    if (!record || candidates.some((c) => c.patientId === patient.id)) continue;
    const reasons: Reason[] = [record, { code: 'no-order', points: 0, text: `No open ${reading.analyte} test for this patient.` }];
    const species = speciesReason(patient);
    if (species) reasons.push(species);
    candidates.push({
      patientId: patient.id,
      patientName: patient.name,
      recordNumber: patient.recordNumber,
      orderId: null,
      score: reasons.reduce((s, r) => s + r.points, 0),
      reasons,
      speciesWarning: speciesWarning(analyte, patient),
    });
  }

  return finish(candidates, new Map(eligible.map((o) => [o.id, o.startedAt.getTime()])));
}

// An ID printed on the reading is direct evidence; timing and instrument are circumstantial. So
// candidates named by an ID come first, and their contrary reasons are shown beside them.
const isExact = (c: Pick<Candidate, 'reasons'>) => c.reasons.some((r) => r.code === 'sample-id-match' || r.code === 'record-id-match');

/** Sorts, marks ties and grades candidates; used again after readings competing for one run are weighed. */
function finish(candidates: Omit<Candidate, 'tiedWith' | 'strength'>[], startedAt: Map<string, number>): Candidate[] {
  const sorted = [...candidates].sort(
    (a, b) =>
      Number(isExact(b)) - Number(isExact(a)) ||
      b.score - a.score ||
      (startedAt.get(a.orderId ?? '') ?? Infinity) - (startedAt.get(b.orderId ?? '') ?? Infinity) ||
      a.recordNumber.localeCompare(b.recordNumber),
  );
  return sorted.map((c) => ({
    ...c,
    tiedWith: sorted.filter((o) => o !== c && o.score === c.score && isExact(o) === isExact(c)).length,
    strength: isExact(c) ? 'exact' : c.score >= 60 ? 'strong' : c.score >= 20 ? 'possible' : 'weak',
  }));
}

/**
 * Ranks several waiting readings together. One run gives one reading, so when more than one waiting
 * reading fits the same run, only the one the evidence favours most keeps it at full weight (an exact ID,
 * else the arrival nearest the due time, else the earlier arrival); the others say so and drop.
 */
export function rankWaitingReadings(
  readings: MatchReading[],
  context: Omit<MatchInput, 'reading'>,
): Map<string, Candidate[]> {
  const ranked = new Map(readings.map((reading) => [reading.id, rankCandidates({ ...context, reading })]));
  const byId = new Map(readings.map((r) => [r.id, r]));
  const orders = new Map(context.orders.map((o) => [o.id, o]));
  const clock = clockIn(context.timeZone);
  const claims = new Map<string, { readingId: string; candidate: Candidate }[]>();
  for (const [readingId, candidates] of ranked) {
    for (const candidate of candidates) {
      if (!candidate.orderId || candidate.reasons.some((r) => r.code === 'too-early')) continue;
      const list = claims.get(candidate.orderId) ?? [];
      list.push({ readingId, candidate });
      claims.set(candidate.orderId, list);
    }
  }
  const penalised = new Map<string, Map<string, Reason>>();
  for (const [orderId, list] of claims) {
    if (list.length < 2) continue;
    const order = orders.get(orderId)!;
    const offBy = (id: string) => Math.abs(byId.get(id)!.arrivedAt.getTime() - order.dueAt.getTime());
    const best = [...list].sort(
      (a, b) =>
        Number(isExact(b.candidate)) - Number(isExact(a.candidate)) ||
        offBy(a.readingId) - offBy(b.readingId) ||
        byId.get(a.readingId)!.arrivedAt.getTime() - byId.get(b.readingId)!.arrivedAt.getTime(),
    )[0];
    const winner = byId.get(best.readingId)!;
    for (const { readingId, candidate } of list) {
      if (readingId === best.readingId || isExact(candidate)) continue;
      const reason: Reason = {
        code: 'another-reading-fits',
        points: POINTS.anotherReadingFits,
        text: isExact(best.candidate)
          ? `Another waiting reading (${clock(winner.arrivedAt)}) carries this run's ID; one run gives one reading.`
          : `Another waiting reading arrived nearer this run's due time (${clock(winner.arrivedAt)}); one run gives one reading.`,
      };
      const forReading = penalised.get(readingId) ?? new Map<string, Reason>();
      forReading.set(orderId, reason);
      penalised.set(readingId, forReading);
    }
  }
  const startedAt = new Map(context.orders.map((o) => [o.id, o.startedAt.getTime()]));
  for (const [readingId, byOrder] of penalised) {
    const adjusted = ranked.get(readingId)!.map((c) => {
      const reason = c.orderId ? byOrder.get(c.orderId) : undefined;
      return reason ? { ...c, reasons: [...c.reasons, reason], score: c.score + reason.points } : c;
    });
    ranked.set(readingId, finish(adjusted, startedAt));
  }
  return ranked;
}

export interface AutoAssignTarget {
  orderId: string;
  patientId: string;
  reason: string;
}

/**
 * The one rule that may put a reading on a patient without a person: an exact sample ID (or record
 * number) on the reading that names exactly one open order for the same test, on the same instrument
 * if the order names one, for a species the test is validated for. Anything less returns null.
 * The clinic must have switched the rule on; the caller checks that.
 */
export function autoAssignTarget(input: MatchInput): AutoAssignTarget | null {
  const { reading } = input;
  if (!reading.sampleId && !reading.patientRef) return null;
  const patients = new Map(input.patients.map((p) => [p.id, p]));
  const analyte = input.analytes.find((a) => a.code === reading.analyte);
  const open = openOrdersFor(reading, input.orders, patients).filter((o) => !o.instrumentId || o.instrumentId === reading.instrumentId);
  const bySample = open.filter((o) => sameId(reading.sampleId, o.sampleId));
  const byRecord = open.filter((o) => {
    const p = patients.get(o.patientId)!;
    return sameId(reading.patientRef, p.recordNumber) || sameId(reading.sampleId, p.recordNumber);
  });
  const matches = bySample.length > 0 ? bySample : byRecord;
  if (matches.length !== 1) return null;
  const order = matches[0];
  const patient = patients.get(order.patientId)!;
  // Two different orders named by the two IDs, or a species the test is not validated for: a person decides.
  if (bySample.length > 0 && byRecord.length > 0 && byRecord.some((o) => o.id !== order.id)) return null;
  if (speciesWarning(analyte, patient)) return null;
  const how = bySample.length > 0 ? `sample ID ${reading.sampleId!.trim()}` : `record number ${patient.recordNumber}`;
  return { orderId: order.id, patientId: patient.id, reason: `Exact ${how} on the reading matches the one open ${order.analyte} test for ${patient.name}.` };
}
