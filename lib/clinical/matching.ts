// Match suggestions for readings that arrived without a patient, as probabilities. Pure: the caller
// loads the waiting readings, the open orders, their patients, the instruments and the analytes; this
// module only weighs the evidence and says why, in the clinic's words. It never decides on its own: the
// one rule that may put a reading on a patient without a person is autoAssignTarget (exact ID only).
//
// The model, in short. For the waiting readings R and the open orders O of one test, a hypothesis gives
// each reading one order or "none of these" (a run the app was never told about), no order twice.
//   weight(hypothesis) = Π over readings r of w(r, its order)        (w(r, none) = NONE_WEIGHT)
//   w(r, o) = timing(r, o) · reader(r, o) · ids(r, o) · channel(r, o) / unseen(o)
// timing   the density of the arrival minus (start + the protocol's full duration), from the clinic's
//          spread of "started" clicks (learnTiming), with a thin wide tail for a reading taken late;
// reader   a named reader must be the one that sent the reading; an unnamed order was on one of the
//          readers for the test that were free when it began (placed runs and named runs hold a reader);
// ids      an exact sample or record ID is decisive; an ID that names someone else is strong evidence against;
// channel  one run per channel: no other open run on a single-channel reader ran while this one did. An
//          open run clicked before this one either was aborted before it began (and after the reader's
//          previous run: it had to fit on the reader too) or began after the reading;
// unseen   the chance that an order shows no reading yet: aborted (ABORT_PRIOR), or still running. Still
//          running means one unknown start (the click plus the spread) that fell after the last reading of
//          a reader it could be on, on a reader no other run still running holds (a named run on it, or an
//          unnamed run's share of it), with its reading still to come; these are weighed together over
//          that one start, not multiplied as if independent. An unnamed run read as aborted must have
//          fitted its short run on a reader between the runs known to have held it. Dividing by unseen is
//          what makes an overdue run expect its reading, and lets a run long overdue on a busy reader be
//          read as aborted instead of blocking the reader (abortProbability).
// What it does not model: how busy the bench is. Every start time is taken as equally likely a priori;
// on a bench running back to back, runs start just after a reader frees, and two unnamed runs clicked
// close together are then told apart less well than the probabilities say (tests/bench prints the
// reliability table); on a quiet bench the other way round.
// Species is never evidence of identity: it is a warning beside the suggestion.
import { formatDuration } from './protocols';

export interface MatchReading {
  id: string;
  analyte: string;
  instrumentId: string | null;
  sampleId: string | null;
  patientRef: string | null;
  /** When the reading reached the bridge. */
  arrivedAt: Date;
}

export interface MatchOrder {
  id: string;
  patientId: string;
  analyte: string;
  /** The reader named when the test was started; null when none was. */
  instrumentId: string | null;
  sampleId: string | null;
  /** When "started" was clicked. */
  startedAt: Date;
  /** The run protocol's full duration, every stage including the measurement: due = startedAt + runSeconds. */
  runSeconds: number;
  /** Only open orders are candidates; absent means open. */
  status?: 'open' | 'fulfilled' | 'aborted' | 'cancelled';
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
  /** Tests this instrument runs; empty or absent means any. */
  analytes?: string[];
}

export interface MatchAnalyte {
  code: string;
  validatedSpecies: string[];
}

/** How early or late readings arrive against the due time: a centre and a spread, in seconds. */
export interface TimingModel {
  offsetSeconds: number;
  spreadSeconds: number;
  /** How many confirmed matches the estimate rests on (0: the defaults). */
  basedOn: number;
}

export interface MatchContext {
  orders: MatchOrder[];
  patients: MatchPatient[];
  instruments: MatchInstrument[];
  analytes: MatchAnalyte[];
  /**
   * Readings already placed today, per instrument: a single-channel reader was busy until each arrival,
   * from the start of the run it was placed on (null when placed without a run).
   */
  placed?: { instrumentId: string; arrivedAt: Date; startedAt: Date | null }[];
  timing?: TimingModel;
  /** The moment the suggestions are for; the latest arrival when absent. */
  now?: Date;
  /** The clinic's time zone, for the times written in reasons (IANA name); UTC when absent. */
  timeZone?: string;
}

export type ReasonCode =
  | 'sample-id-match'
  | 'record-id-match'
  | 'id-names-other'
  | 'sample-id-differs'
  | 'instrument-match'
  | 'instrument-differs'
  | 'instrument-unknown'
  | 'timing'
  | 'reader-busy'
  | 'earlier-run-probably-aborted'
  | 'another-reading-fits'
  | 'no-order';

export interface Reason {
  code: ReasonCode;
  /** Whether it speaks for this candidate, against it, or neither. */
  effect: 'for' | 'against' | 'neutral';
  text: string;
}

export interface Candidate {
  patientId: string;
  patientName: string;
  recordNumber: string;
  /** The open order this reading would complete; null for a patient named by an ID without an open order. */
  orderId: string | null;
  probability: number;
  reasons: Reason[];
  /** Shown beside the suggestion; never used as evidence. */
  speciesWarning: string | null;
}

export interface Suggestion {
  readingId: string;
  /** Best first; only candidates with a probability worth showing. */
  candidates: Candidate[];
  /** The probability that the reading belongs to none of the open orders. */
  noneProbability: number;
  /** Only a confident suggestion may be preselected and confirmed in one click. */
  confident: boolean;
}

/** The model's constants. Each is a judgement, stated here so it can be checked against the benchmark. */
export const MODEL = {
  /** Defaults while the clinic's history is thin: the due time is right on average, clicks ±1 min. */
  defaultOffsetSeconds: 0,
  defaultSpreadSeconds: 60,
  /** Confirmed matches before the clinic's own estimate carries half the weight. */
  priorStrength: 20,
  minSpreadSeconds: 15,
  /** A reading taken late (reader left closed, bridge offline): a thin wide tail. */
  lateTailWeight: 0.003,
  lateTailSeconds: 900,
  /** How often a run is aborted and left open (2–5 % on a real bench, common practice, no source). */
  abortPrior: 0.04,
  /** An aborted run frees its reader at the re-insertion step, about 40 s after the start. */
  abortSeconds: 40,
  /** A reading from a run nobody started in the app, spread over a few hours. */
  noneWeight: 0.01 / (3 * 3600),
  /** A named reader that is not the one that sent the reading: a typo at most. */
  wrongReader: 1e-4,
  /** The floor of an impossible sequence on one channel (the recorded start may be wrong). */
  channelFloor: 1e-4,
  sampleIdMatch: 1e6,
  recordIdMatch: 1e5,
  idNamesOther: 1e-4,
  sampleIdDiffers: 0.05,
  /**
   * Confident: at least this probability, and ahead of the next (or of "none") by at least `confidentMargin`.
   * 0.999 rather than 0.97: on the clinic-day benchmark 0.97–0.998 still let through a confident wrong
   * suggestion now and then (tests/bench/matching.bench.ts prints the table).
   */
  confidentAt: 0.999,
  confidentMargin: 0.99,
  /** Candidates below this are not shown. */
  showAbove: 0.001,
} as const;

const sameId = (a: string | null | undefined, b: string | null | undefined) =>
  !!a && !!b && a.trim().toLowerCase() === b.trim().toLowerCase();

type Clock = (d: Date) => string;
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

// ---- distributions -------------------------------------------------------------------------------

/** Standard normal CDF (Abramowitz & Stegun 7.1.26 for erf, |error| < 1.5e-7). */
export function normalCdf(z: number): number {
  const x = Math.abs(z) / Math.SQRT2;
  const t = 1 / (1 + 0.3275911 * x);
  const y = 1 - ((((1.061405429 * t - 1.453152027) * t + 1.421413741) * t - 0.284496736) * t + 0.254829592) * t * Math.exp(-x * x);
  return z >= 0 ? 0.5 * (1 + y) : 0.5 * (1 - y);
}

const normalPdf = (x: number, sd: number) => Math.exp(-0.5 * (x / sd) ** 2) / (sd * Math.sqrt(2 * Math.PI));

/**
 * Density of a reading arriving `offset` seconds after the due time: the click spread, plus a thin tail
 * on the late side only (a reading taken late); a run cannot finish much before its stages allow.
 */
export function timingDensity(offset: number, timing: TimingModel): number {
  const x = offset - timing.offsetSeconds;
  const tail = x > 0 ? 2 * normalPdf(x, MODEL.lateTailSeconds) : 0;
  return (1 - MODEL.lateTailWeight) * normalPdf(x, timing.spreadSeconds) + MODEL.lateTailWeight * tail;
}

/** The chance that a run's reading has not arrived `offset` seconds after its due time. */
export function stillToCome(offset: number, timing: TimingModel): number {
  const x = offset - timing.offsetSeconds;
  const tail = x > 0 ? 2 * (1 - normalCdf(x / MODEL.lateTailSeconds)) : 1;
  return (1 - MODEL.lateTailWeight) * (1 - normalCdf(x / timing.spreadSeconds)) + MODEL.lateTailWeight * tail;
}

/**
 * The probability that an open run with no reading yet was aborted, `overdueSeconds` after its due
 * time: grows from the prior towards 1 as the run gets overdue.
 */
export function abortProbability(overdueSeconds: number, timing: TimingModel = defaultTiming()): number {
  const pending = (1 - MODEL.abortPrior) * stillToCome(overdueSeconds, timing);
  return MODEL.abortPrior / (MODEL.abortPrior + pending);
}

export const defaultTiming = (): TimingModel => ({ offsetSeconds: MODEL.defaultOffsetSeconds, spreadSeconds: MODEL.defaultSpreadSeconds, basedOn: 0 });

const median = (xs: number[]) => {
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
};

/**
 * The clinic's timing, learned robustly from confirmed matches (arrival minus due, in seconds): the
 * median as the centre and 1.4826 × the median absolute deviation as the spread (a consistent estimate
 * of a normal SD that ignores the odd reading taken late; Rousseeuw & Croux, JASA 1993). While the
 * history is thin the estimate is blended with the defaults, weighted by count.
 */
export function learnTiming(offsets: number[]): TimingModel {
  const usable = offsets.filter((x) => Number.isFinite(x) && Math.abs(x) < 3600);
  if (usable.length === 0) return defaultTiming();
  const centre = median(usable);
  const spread = 1.4826 * median(usable.map((x) => Math.abs(x - centre)));
  const n = usable.length;
  const k = MODEL.priorStrength;
  return {
    offsetSeconds: (n * centre + k * MODEL.defaultOffsetSeconds) / (n + k),
    spreadSeconds: Math.max(MODEL.minSpreadSeconds, (n * spread + k * MODEL.defaultSpreadSeconds) / (n + k)),
    basedOn: n,
  };
}

// ---- the weights ---------------------------------------------------------------------------------

interface Edge {
  order: MatchOrder;
  weight: number;
  /** The reading's sample ID or record number names this order or its patient (always offered). */
  named: boolean;
  /** Why, written only for a candidate that is shown. */
  reasons: () => Reason[];
}

const dueOf = (o: MatchOrder) => o.startedAt.getTime() + o.runSeconds * 1000;

/** Suggestions for every waiting reading (or only those in `only`, with their `top` candidates), all weighed together. */
export function suggestMatches(
  readings: MatchReading[],
  context: MatchContext,
  options: { only?: ReadonlySet<string>; top?: number } = {},
): Map<string, Suggestion> {
  // The same few due times are written into the reasons of every waiting reading: format each once.
  const clockOf = clockIn(context.timeZone);
  const clocked = new Map<number, string>();
  const clock = (d: Date) => {
    const ms = d.getTime();
    let text = clocked.get(ms);
    if (text === undefined) clocked.set(ms, (text = clockOf(d)));
    return text;
  };
  const timing = context.timing ?? defaultTiming();
  const sd = timing.spreadSeconds;
  const patients = new Map(context.patients.map((p) => [p.id, p]));
  const instruments = new Map(context.instruments.map((i) => [i.id, i]));
  const now = context.now?.getTime() ?? Math.max(0, ...readings.map((r) => r.arrivedAt.getTime()));
  const open = context.orders.filter((o) => (o.status ?? 'open') === 'open' && patients.has(o.patientId));

  // Every known arrival per instrument, placed or waiting: a single-channel reader was busy until each.
  const arrivals = new Map<string, number[]>();
  const addArrival = (instrumentId: string | null, at: number) => {
    if (!instrumentId) return;
    const list = arrivals.get(instrumentId) ?? [];
    list.push(at);
    arrivals.set(instrumentId, list);
  };
  for (const p of context.placed ?? []) addArrival(p.instrumentId, p.arrivedAt.getTime());
  for (const r of readings) addArrival(r.instrumentId, r.arrivedAt.getTime());
  for (const list of arrivals.values()) list.sort((a, b) => a - b);
  const singleChannel = (id: string | null) => !!id && (instruments.get(id)?.channels ?? 1) === 1;
  const lastArrivalBefore = (instrumentId: string, t: number) => {
    const list = arrivals.get(instrumentId) ?? [];
    // Sorted above: the last arrival before t by bisection (it is asked for every pair of runs).
    let lo = 0;
    let hi = list.length;
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      if (list[mid] < t) lo = mid + 1;
      else hi = mid;
    }
    return lo > 0 ? list[lo - 1] : null;
  };
  const readersFor = (analyte: string) => context.instruments.filter((i) => !i.analytes || i.analytes.length === 0 || i.analytes.includes(analyte));
  // Known busy spells per single-channel reader: placed runs (start to arrival).
  const spells = new Map<string, { from: number; to: number }[]>();
  for (const p of context.placed ?? []) {
    if (!p.startedAt) continue;
    const list = spells.get(p.instrumentId) ?? [];
    list.push({ from: p.startedAt.getTime(), to: p.arrivedAt.getTime() });
    spells.set(p.instrumentId, list);
  }

  /**
   * The chance that order `o` is still running now, its reading to come: its run began at the click plus
   * Z (Z ~ the click spread), on a reader that was free then and has sent nothing since. Both conditions
   * are about the same unknown start, so they are weighed together (not multiplied as if independent):
   * reader x is possible when Z > after[x] (the start fell after x's last reading) and, with chance
   * free[x], no other run holds it. The reading is still to come when Z > now − due, or it was taken late.
   */
  const stillRunning = (o: MatchOrder, readers: { after: number; free: number }[]) => {
    const c = o.startedAt.getTime();
    const a = (now - dueOf(o)) / 1000 - timing.offsetSeconds;
    // Segments of Z between the readers' thresholds, where the chance some reader is possible is constant.
    const cuts = readers.map((x) => ({ at: (x.after - c) / 1000, free: x.free })).sort((p, q) => p.at - q.at);
    let noneFree = 1;
    let all = 0;
    let toCome = 0;
    cuts.forEach((cut, i) => {
      noneFree *= 1 - cut.free;
      const from = cut.at;
      const to = i + 1 < cuts.length ? cuts[i + 1].at : Infinity;
      if (to <= from) return;
      const mass = (lo: number) => (to === Infinity ? 1 : normalCdf(to / sd)) - normalCdf(Math.max(lo, from) / sd);
      all += (1 - noneFree) * mass(-Infinity);
      if (to > a) toCome += (1 - noneFree) * mass(a);
    });
    const lateTail = a > 0 ? 2 * (1 - normalCdf(a / MODEL.lateTailSeconds)) : 1;
    return (1 - MODEL.lateTailWeight) * toCome + MODEL.lateTailWeight * lateTail * all;
  };
  /** The chance this order shows no reading by now: aborted, or still running. */
  const unseenOf = (pending: number, fits = 1) => MODEL.abortPrior * fits + (1 - MODEL.abortPrior) * pending;
  // Each known reading on a single-channel reader closes a run that held it for about a run's duration.
  const runs = open.map((o) => o.runSeconds).filter((x) => x > 0);
  const typicalRun = runs.length > 0 ? median(runs) * 1000 : 0;
  const busy = new Map<string, { from: number; to: number }[]>();
  for (const [id, list] of arrivals) {
    if (!singleChannel(id) || typicalRun <= 0) continue;
    busy.set(id, list.map((a) => ({ from: a - typicalRun - timing.offsetSeconds * 1000, to: a })));
  }
  /**
   * The chance an aborted run started at the click plus Z fitted on one of these readers: its short run
   * (abortSeconds) overlaps none of the runs known to have held the reader. Summed over a grid of Z.
   */
  const abortFits = (o: MatchOrder, readers: MatchInstrument[]) => {
    if (readers.length === 0 || readers.some((x) => x.channels !== 1)) return 1;
    const c = o.startedAt.getTime();
    const abort = MODEL.abortSeconds * 1000;
    const reach = 4 * sd * 1000;
    const near = readers.map((x) => (busy.get(x.id) ?? []).filter((b) => b.to > c - reach && b.from < c + reach + abort));
    let fits = 0;
    let total = 0;
    for (let k = -40; k <= 40; k += 1) {
      const z = k / 10;
      const w = Math.exp(-0.5 * z * z);
      const start = c + z * sd * 1000;
      total += w;
      if (near.some((list) => !list.some((b) => b.from < start + abort && b.to > start))) fits += w;
    }
    return Math.max(MODEL.channelFloor, fits / total);
  };
  const lastOn = (x: MatchInstrument | string) => {
    const id = typeof x === 'string' ? x : x.id;
    return singleChannel(id) ? (lastArrivalBefore(id, now + 1) ?? -Infinity) : -Infinity;
  };
  const unseen = (o: MatchOrder) => unseenOf(stillRunning(o, [{ after: lastOn(o.instrumentId!), free: 1 }]));
  const unseenBy = new Map(open.filter((o) => o.instrumentId).map((o) => [o.id, unseen(o)]));

  /**
   * How likely reader `x` was free when unnamed order `o` was started: not inside a placed run on it,
   * nor inside a named open run on it that was not aborted. Soft at the edges by the click spread.
   */
  const freeAt = (x: MatchInstrument, o: MatchOrder, at: number) => {
    if (x.channels !== 1) return 1;
    const margin = 4 * sd * 1000;
    let free = 1;
    for (const spell of spells.get(x.id) ?? []) {
      if (spell.to <= at || spell.from > at + margin) continue;
      free *= 1 - normalCdf((at - spell.from) / 1000 / sd);
    }
    for (const b of open) {
      if (b.id === o.id || b.instrumentId !== x.id) continue;
      const from = b.startedAt.getTime();
      const to = dueOf(b);
      if (to < at - margin || from > at + margin) continue;
      const running = Math.max(0, 1 - MODEL.abortPrior / (unseenBy.get(b.id) ?? 1));
      free *= 1 - running * normalCdf((at - from) / 1000 / sd) * normalCdf((to - at) / 1000 / sd);
    }
    return Math.max(MODEL.channelFloor, free);
  };
  /** The share of the unnamed order's chance of having run on reader `id`, among the readers for its test. */
  const onReaderShare = (o: MatchOrder, id: string | null, at: number) => {
    const readers = readersFor(o.analyte);
    if (readers.length === 0) return 1;
    const total = readers.reduce((sum, x) => sum + freeAt(x, o, at), 0);
    const here = readers.find((x) => x.id === id);
    return here ? freeAt(here, o, at) / total : MODEL.wrongReader;
  };
  // An unnamed run still running needs a reader that was free when it started, has sent nothing since,
  // and that no other run still running holds now: a named one on it, or an unnamed one, which holds one
  // of the readers it could be on (its chance spread over them). Two passes: the unnamed runs' holds are
  // estimated first without each other, then used.
  let unnamedHold = new Map<string, Map<string, number>>();
  const heldBy = (x: MatchInstrument, o: MatchOrder) => {
    if (x.channels !== 1) return 0;
    let free = 1;
    for (const b of open) {
      if (b.id === o.id) continue;
      if (b.instrumentId === x.id) free *= Math.min(1, MODEL.abortPrior / (unseenBy.get(b.id) ?? 1));
      else if (!b.instrumentId) free *= 1 - (unnamedHold.get(b.id)?.get(x.id) ?? 0);
    }
    return 1 - free;
  };
  for (let pass = 0; pass < 2; pass += 1) {
    const holds = new Map<string, Map<string, number>>();
    for (const o of open) {
      if (o.instrumentId) continue;
      const readers = readersFor(o.analyte);
      const options = readers.map((x) => ({ after: lastOn(x), free: 1 - heldBy(x, o) }));
      const fits = abortFits(o, readers);
      const u = unseenOf(stillRunning(o, readers.length === 0 ? [{ after: -Infinity, free: 1 }] : options), fits);
      unseenBy.set(o.id, u);
      const running = Math.max(0, 1 - (MODEL.abortPrior * fits) / u);
      const each = readers.map((x, i) => (x.channels === 1 ? stillRunning(o, [options[i]]) : 0));
      const sum = each.reduce((a, b) => a + b, 0);
      holds.set(o.id, new Map(readers.map((x, i) => [x.id, sum > 0 ? (running * each[i]) / sum : 0])));
    }
    unnamedHold = holds;
  }

  /**
   * The other open runs named on a single-channel reader that sent a reading at T from a run begun at
   * `began`: each either ended (aborted) before that run began, or began after the reading; anything else
   * means two runs at once on one channel. Returns each run with that chance.
   */
  const channelConflicts = (readerId: string, began: number, T: number, except: string | null, runMs: number) => {
    const out: { b: MatchOrder; f: number }[] = [];
    for (const b of open) {
      if (b.id === except || b.instrumentId !== readerId) continue;
      const s = b.startedAt.getTime();
      if (s >= T) continue;
      // Its start is the click plus Z. Ended before: its short run (abortSeconds) fell before `began`, and
      // not across the reader's previous run (which ended with the reading before `began`). Began after:
      // Z > T − s. The ranges of the same Z are disjoint, so their chances add.
      const z = (t: number) => normalCdf((t - s) / 1000 / sd);
      const abort = MODEL.abortSeconds * 1000;
      let before = z(began - abort);
      const previous = lastArrivalBefore(readerId, began);
      if (previous !== null) before -= Math.max(0, z(Math.min(previous, began - abort)) - z(previous - runMs - abort));
      const after = 1 - z(T);
      out.push({ b, f: Math.max(MODEL.channelFloor, Math.max(0, before) + after) });
    }
    return out;
  };
  /** "None of these": a run nobody entered, which still occupied the reader that sent the reading. */
  const noneWeightFor = (r: MatchReading) => {
    let weight: number = MODEL.noneWeight;
    if (!r.instrumentId || !singleChannel(r.instrumentId)) return weight;
    const runs = open.filter((o) => o.analyte === r.analyte).map((o) => o.runSeconds);
    if (runs.length === 0) return weight;
    const T = r.arrivedAt.getTime();
    const began = T - median(runs) * 1000 - timing.offsetSeconds * 1000;
    for (const { f } of channelConflicts(r.instrumentId, began, T, null, median(runs) * 1000)) weight *= f;
    return weight;
  };

  const edgesFor = (r: MatchReading): Edge[] => {
    const eligible = open.filter((o) => o.analyte === r.analyte && o.startedAt.getTime() <= r.arrivedAt.getTime());
    const namedOrders = eligible.filter((o) => sameId(r.sampleId, o.sampleId));
    const namedPatients = context.patients.filter((p) => sameId(r.patientRef, p.recordNumber) || sameId(r.sampleId, p.recordNumber));
    const T = r.arrivedAt.getTime();
    // The weight of order o for this reading; with `reasons`, also why. Every order is weighed, but only the
    // few candidates shown get their reasons written (weighed again, the same way): writing them for every
    // pair took most of the time with many readings waiting.
    const weigh = (o: MatchOrder, reasons?: Reason[]) => {
      const patient = patients.get(o.patientId)!;
      let weight = 1;

      // IDs printed on the reading.
      if (sameId(r.sampleId, o.sampleId)) {
        weight *= MODEL.sampleIdMatch;
        reasons?.push({ code: 'sample-id-match', effect: 'for', text: `Sample ID ${r.sampleId!.trim()} on the reading matches this order's tube label.` });
      } else if (r.sampleId && o.sampleId && !sameId(r.sampleId, patient.recordNumber)) {
        weight *= MODEL.sampleIdDiffers;
        reasons?.push({ code: 'sample-id-differs', effect: 'against', text: `The reading's sample ID ${r.sampleId.trim()} differs from this order's tube label ${o.sampleId.trim()}.` });
      }
      if (namedPatients.some((p) => p.id === patient.id)) {
        weight *= MODEL.recordIdMatch;
        reasons?.push({ code: 'record-id-match', effect: 'for', text: `The reading names record ${patient.recordNumber}, this patient's record number.` });
      }
      const namedHere = namedOrders.some((n) => n.id === o.id) || namedPatients.some((p) => p.id === patient.id);
      const other = namedOrders.find((n) => n.patientId !== patient.id) ?? null;
      const otherPatient = other ? patients.get(other.patientId) : namedPatients.find((p) => p.id !== patient.id);
      if (!namedHere && otherPatient) {
        weight *= MODEL.idNamesOther;
        reasons?.push({ code: 'id-names-other', effect: 'against', text: `The ID printed on the reading names ${otherPatient.name} (${otherPatient.recordNumber}), not this patient.` });
      }

      // The reader.
      const instrument = o.instrumentId ? instruments.get(o.instrumentId) : undefined;
      const onReader = o.instrumentId ?? r.instrumentId;
      if (!o.instrumentId) {
        weight *= onReaderShare(o, r.instrumentId, T - o.runSeconds * 1000 - timing.offsetSeconds * 1000);
        reasons?.push({ code: 'instrument-unknown', effect: 'neutral', text: 'No reader was named when the test was started: it could have run on any reader for this test.' });
      } else if (o.instrumentId === r.instrumentId) {
        reasons?.push({ code: 'instrument-match', effect: 'for', text: `Started on ${instrument?.name ?? 'this reader'}, the one that sent the reading.` });
      } else {
        weight *= MODEL.wrongReader;
        reasons?.push({ code: 'instrument-differs', effect: 'against', text: `Started on ${instrument?.name ?? 'another reader'}, not the one that sent the reading.` });
      }

      // Timing against the full protocol.
      const offset = (T - dueOf(o)) / 1000;
      weight *= timingDensity(offset, timing);
      if (reasons) {
        const z = Math.abs(offset - timing.offsetSeconds) / sd;
        const when = Math.abs(offset) < 1 ? 'right at the due time' : `${formatDuration(offset)} ${offset < 0 ? 'before' : 'after'} the due time`;
        reasons.push({
          code: 'timing',
          effect: z <= 2 ? 'for' : z <= 4 ? 'neutral' : 'against',
          text: `Arrived ${when} (${clock(new Date(dueOf(o)))}); readings here usually arrive within ${formatDuration(2 * sd)} of it.`,
        });
      }

      // One run per channel.
      if (onReader && singleChannel(onReader)) {
        const readerName = instruments.get(onReader)?.name ?? 'this reader';
        // The run behind this reading began about its duration before the arrival, whatever was clicked.
        const began = T - o.runSeconds * 1000 - timing.offsetSeconds * 1000;
        for (const { b, f } of channelConflicts(onReader, began, T, o.id, o.runSeconds * 1000)) {
          weight *= f;
          const bp = patients.get(b.patientId);
          if (f < 0.5) {
            reasons?.push({
              code: 'reader-busy',
              effect: 'against',
              text: `${bp?.name ?? 'Another patient'}'s run was started on ${readerName} at ${clock(b.startedAt)}, while this one would still have been running.`,
            });
          } else if ((unseenBy.get(b.id) ?? 1) < 0.5 && b.startedAt.getTime() < began) {
            reasons?.push({
              code: 'earlier-run-probably-aborted',
              effect: 'neutral',
              text: `${bp?.name ?? 'Another patient'}'s earlier run on ${readerName} (${clock(b.startedAt)}) has no reading and is probably aborted.`,
            });
          }
        }
      }

      weight /= unseenBy.get(o.id) ?? 1;
      return weight;
    };
    return eligible.map((o) => ({
      order: o,
      weight: weigh(o),
      named: sameId(r.sampleId, o.sampleId) || namedPatients.some((p) => p.id === o.patientId),
      reasons: () => {
        const reasons: Reason[] = [];
        weigh(o, reasons);
        return reasons;
      },
    }));
  };

  // Readings by test; within a test, readings that share a candidate are weighed jointly.
  const edges = new Map(readings.map((r) => [r.id, edgesFor(r)]));
  const noneWeights = new Map(readings.map((r) => [r.id, noneWeightFor(r)]));
  const marginals = jointMarginals(readings, edges, noneWeights);
  const analytes = new Map(context.analytes.map((a) => [a.code, a]));
  const result = new Map<string, Suggestion>();
  for (const r of readings) {
    if (options.only && !options.only.has(r.id)) continue;
    const m = marginals.get(r.id)!;
    const analyte = analytes.get(r.analyte);
    const candidates: Candidate[] = [];
    // Reasons are written once the candidates are ranked, for those kept.
    const unwritten = new Map<Candidate, Edge>();
    for (const e of edges.get(r.id)!) {
      const probability = m.byOrder.get(e.order.id) ?? 0;
      if (probability < MODEL.showAbove && !e.named) continue;
      const patient = patients.get(e.order.patientId)!;
      const candidate: Candidate = { patientId: patient.id, patientName: patient.name, recordNumber: patient.recordNumber, orderId: e.order.id, probability, reasons: [], speciesWarning: speciesWarning(analyte, patient) };
      unwritten.set(candidate, e);
      candidates.push(candidate);
    }
    // A record number printed on the reading names a patient even without an open order: offered, never confident.
    for (const patient of context.patients) {
      if (!(sameId(r.patientRef, patient.recordNumber) || sameId(r.sampleId, patient.recordNumber))) continue;
      if (candidates.some((c) => c.patientId === patient.id)) continue;
      candidates.push({
        patientId: patient.id,
        patientName: patient.name,
        recordNumber: patient.recordNumber,
        orderId: null,
        probability: m.none,
        reasons: [
          { code: 'record-id-match', effect: 'for', text: `The reading names record ${patient.recordNumber}, this patient's record number.` },
          { code: 'no-order', effect: 'neutral', text: `No open ${r.analyte} test for this patient.` },
        ],
        speciesWarning: speciesWarning(analyte, patient),
      });
    }
    candidates.sort((a, b) => b.probability - a.probability || a.recordNumber.localeCompare(b.recordNumber));
    const [first, second] = candidates;
    const runnerUp = Math.max(second?.orderId ? second.probability : 0, m.none);
    const confident = !!first?.orderId && first.probability >= MODEL.confidentAt && first.probability - runnerUp >= MODEL.confidentMargin;
    const kept = options.top === undefined ? candidates : candidates.slice(0, options.top);
    for (const candidate of kept) {
      const e = unwritten.get(candidate);
      if (!e) continue;
      candidate.reasons = e.reasons();
      const lost = m.lostTo.get(e.order.id);
      if (lost && lost > 0.5) candidate.reasons.push({ code: 'another-reading-fits', effect: 'against', text: 'Another waiting reading fits this run better; one run gives one reading.' });
    }
    result.set(r.id, { readingId: r.id, candidates: kept, noneProbability: m.none, confident });
  }
  return result;
}

/** Suggestions for one reading, with no other reading waiting. */
export function suggestMatch(reading: MatchReading, context: MatchContext): Suggestion {
  return suggestMatches([reading], context).get(reading.id)!;
}

interface Marginal {
  byOrder: Map<string, number>;
  none: number;
  /** For each order: the probability that another waiting reading has it. */
  lostTo: Map<string, number>;
}

/** Most candidates kept per reading in the exact sum; weaker ones are folded into "none". */
const KEEP_PER_READING = 6;
/** Largest group of readings summed exactly; beyond it each reading is weighed on its own. */
const MAX_JOINT = 8;

/**
 * Marginal probabilities over injective assignments (each order to at most one reading), summed exactly
 * within each group of readings that share a candidate order.
 */
function jointMarginals(readings: MatchReading[], edges: Map<string, Edge[]>, noneWeights: Map<string, number>): Map<string, Marginal> {
  const kept = new Map<string, Edge[]>();
  for (const r of readings) {
    const list = [...edges.get(r.id)!].sort((a, b) => b.weight - a.weight);
    kept.set(r.id, list.filter((e, i) => i < KEEP_PER_READING && e.weight > noneWeights.get(r.id)! * 1e-6));
  }
  // Groups: readings linked by a shared candidate order.
  const parent = new Map(readings.map((r) => [r.id, r.id]));
  const find = (x: string): string => (parent.get(x) === x ? x : find(parent.get(x)!));
  const owner = new Map<string, string>();
  for (const r of readings) {
    for (const e of kept.get(r.id)!) {
      const other = owner.get(e.order.id);
      if (other) parent.set(find(r.id), find(other));
      else owner.set(e.order.id, r.id);
    }
  }
  const groups = new Map<string, MatchReading[]>();
  for (const r of readings) {
    const g = find(r.id);
    groups.set(g, [...(groups.get(g) ?? []), r]);
  }

  const out = new Map<string, Marginal>();
  for (const group of groups.values()) {
    if (group.length > MAX_JOINT) {
      for (const r of group) out.set(r.id, sumAssignments([r], kept, noneWeights).get(r.id)!);
    } else {
      for (const [id, m] of sumAssignments(group, kept, noneWeights)) out.set(id, m);
    }
  }
  return out;
}

function sumAssignments(group: MatchReading[], kept: Map<string, Edge[]>, noneWeights: Map<string, number>): Map<string, Marginal> {
  const byReading = group.map((r) => kept.get(r.id)!);
  const none = group.map((r) => noneWeights.get(r.id)!);
  const mass = group.map(() => new Map<string, number>());
  const noneMass = group.map(() => 0);
  let total = 0;
  const taken = new Set<string>();
  const choice: (Edge | null)[] = [];
  // Scale weights so products of a handful stay in range.
  const scale = 1 / MODEL.noneWeight;
  const walk = (i: number, w: number) => {
    if (i === group.length) {
      total += w;
      choice.forEach((c, j) => {
        if (c) mass[j].set(c.order.id, (mass[j].get(c.order.id) ?? 0) + w);
        else noneMass[j] += w;
      });
      return;
    }
    choice[i] = null;
    walk(i + 1, w * none[i] * scale);
    for (const e of byReading[i]) {
      if (taken.has(e.order.id)) continue;
      taken.add(e.order.id);
      choice[i] = e;
      walk(i + 1, w * e.weight * scale);
      taken.delete(e.order.id);
    }
    choice[i] = null;
  };
  walk(0, 1);
  const out = new Map<string, Marginal>();
  group.forEach((r, j) => {
    const byOrder = new Map([...mass[j]].map(([id, w]) => [id, w / total]));
    const lostTo = new Map<string, number>();
    for (const e of byReading[j]) {
      let elsewhere = 0;
      group.forEach((_, k) => {
        if (k !== j) elsewhere += (mass[k].get(e.order.id) ?? 0) / total;
      });
      lostTo.set(e.order.id, elsewhere);
    }
    out.set(r.id, { byOrder, none: noneMass[j] / total, lostTo });
  });
  return out;
}

// ---- the one automatic rule ----------------------------------------------------------------------

export interface AutoAssignInput extends MatchContext {
  reading: MatchReading;
}

export interface AutoAssignTarget {
  orderId: string;
  patientId: string;
  reason: string;
}

/**
 * The one rule that may put a reading on a patient without a person: an exact sample ID (or record
 * number) on the reading that names exactly one open order for the same test, on the same instrument
 * if the order names one, for a species the test is validated for. Anything less returns null: a
 * probability, however high, never assigns on its own. The clinic must have switched the rule on.
 */
export function autoAssignTarget(input: AutoAssignInput): AutoAssignTarget | null {
  const { reading } = input;
  if (!reading.sampleId && !reading.patientRef) return null;
  const patients = new Map(input.patients.map((p) => [p.id, p]));
  const analyte = input.analytes.find((a) => a.code === reading.analyte);
  const open = input.orders.filter(
    (o) =>
      (o.status ?? 'open') === 'open' &&
      o.analyte === reading.analyte &&
      patients.has(o.patientId) &&
      o.startedAt.getTime() <= reading.arrivedAt.getTime() &&
      (!o.instrumentId || o.instrumentId === reading.instrumentId),
  );
  const bySample = open.filter((o) => sameId(reading.sampleId, o.sampleId));
  const byRecord = open.filter((o) => {
    const p = patients.get(o.patientId)!;
    return sameId(reading.patientRef, p.recordNumber) || sameId(reading.sampleId, p.recordNumber);
  });
  const matches = bySample.length > 0 ? bySample : byRecord;
  if (matches.length !== 1) return null;
  const order = matches[0];
  const patient = patients.get(order.patientId)!;
  if (bySample.length > 0 && byRecord.length > 0 && byRecord.some((o) => o.id !== order.id)) return null;
  if (speciesWarning(analyte, patient)) return null;
  const how = bySample.length > 0 ? `sample ID ${reading.sampleId!.trim()}` : `record number ${patient.recordNumber}`;
  return { orderId: order.id, patientId: patient.id, reason: `Exact ${how} on the reading matches the one open ${order.analyte} test for ${patient.name}.` };
}
