// A simulated clinic day at the CRP bench, seeded, for the matching benchmark. Invented data for
// measurement only. What it models (common practice at a point-of-care bench, no published source):
// - tests asked for at random intervals; each goes on the reader that is free first (one run per
//   reader at a time), after a short handling delay; a lunch gap with no new tests;
// - "started" is clicked some seconds before or after the real start (normal, clipped at 3 SD); after
//   the shift change the new shift clicks a little later on average;
// - a run takes mixing ~30 s, re-insertion 2–10 s, incubation 660 s and measurement 20–35 s, then the
//   bridge posts the reading 0.5–3 s later; a share of runs is aborted at re-insertion and left open;
// - some orders name the reader, some tubes carry a label the reader prints, some patients are cats.
import type { ReplayDay } from '@/lib/clinical/replay';

export interface Scenario {
  name: string;
  readers: number;
  /** Seconds between new tests: uniform in [min, max]. */
  intervalSeconds: [number, number];
  namedShare: number;
  clickSdSeconds: number;
  abortShare: number;
  catShare: number;
  labelledShare: number;
  /** Extra mean click delay after the shift change (seconds). */
  shiftBiasSeconds: number;
  tests: number;
}

/** mulberry32: a small seeded generator (public-domain algorithm). */
export function rng(seed: number) {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

function normal(random: () => number) {
  const u = Math.max(random(), 1e-12);
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * random());
}

export const SCENARIOS: Scenario[] = [
  { name: 'calm · 1 reader', readers: 1, intervalSeconds: [60, 240], namedShare: 0.8, clickSdSeconds: 45, abortShare: 0.02, catShare: 0.08, labelledShare: 0.05, shiftBiasSeconds: 15, tests: 200 },
  { name: 'calm · 3 readers', readers: 3, intervalSeconds: [60, 240], namedShare: 0.8, clickSdSeconds: 45, abortShare: 0.02, catShare: 0.08, labelledShare: 0.05, shiftBiasSeconds: 15, tests: 200 },
  { name: 'calm · 4 readers, 3 % aborted', readers: 4, intervalSeconds: [60, 240], namedShare: 0.8, clickSdSeconds: 45, abortShare: 0.03, catShare: 0.08, labelledShare: 0.05, shiftBiasSeconds: 15, tests: 200 },
  { name: 'busy · 2 readers', readers: 2, intervalSeconds: [20, 120], namedShare: 0.5, clickSdSeconds: 60, abortShare: 0.02, catShare: 0.08, labelledShare: 0.05, shiftBiasSeconds: 20, tests: 200 },
  { name: 'busy · 3 readers', readers: 3, intervalSeconds: [20, 120], namedShare: 0.5, clickSdSeconds: 60, abortShare: 0.03, catShare: 0.08, labelledShare: 0.05, shiftBiasSeconds: 20, tests: 200 },
  { name: 'busy · 4 readers, 5 % aborted', readers: 4, intervalSeconds: [20, 120], namedShare: 0.5, clickSdSeconds: 60, abortShare: 0.05, catShare: 0.08, labelledShare: 0.05, shiftBiasSeconds: 20, tests: 200 },
];

const DAY = Date.UTC(2026, 10, 2, 8, 0, 0);
const LUNCH = [DAY + 4.5 * 3600_000, DAY + 5.25 * 3600_000];
const SHIFT = DAY + 6 * 3600_000;

/** One simulated day: the replay file Intake would have recorded, with the true order of each reading. */
export function simulateDay(s: Scenario, seed: number): ReplayDay {
  const random = rng(seed);
  const between = (lo: number, hi: number) => lo + (hi - lo) * random();
  const instruments = Array.from({ length: s.readers }, (_, i) => ({ id: `reader-${i + 1}`, name: `CRP reader ${i + 1}`, channels: 1 }));
  const freeAt = instruments.map(() => DAY);
  const day: ReplayDay = { timeZone: 'UTC', instruments, patients: [], orders: [], readings: [] };
  let asked = DAY;
  for (let n = 0; n < s.tests; n += 1) {
    asked += between(...s.intervalSeconds) * 1000;
    if (asked > LUNCH[0] && asked < LUNCH[1]) asked = LUNCH[1] + between(0, 120_000);
    const reader = freeAt.indexOf(Math.min(...freeAt));
    const start = Math.max(asked, freeAt[reader]) + between(5, 30) * 1000;
    const bias = start >= SHIFT ? s.shiftBiasSeconds : 0;
    const click = Math.max(-3, Math.min(3, normal(random))) * s.clickSdSeconds + bias;
    const patientId = `p${n + 1}`;
    day.patients.push({ id: patientId, species: random() < s.catShare ? 'cat' : 'dog' });
    const labelled = random() < s.labelledShare;
    const orderId = `o${n + 1}`;
    day.orders.push({
      id: orderId,
      patientId,
      analyte: 'cCRP',
      instrumentId: random() < s.namedShare ? instruments[reader].id : null,
      startedAt: new Date(Math.round(start + click * 1000)),
      sampleId: labelled ? `T-${n + 1}` : null,
    });
    const mixing = between(28, 32) + between(2, 10);
    if (random() < s.abortShare) {
      freeAt[reader] = start + (mixing + between(10, 40)) * 1000;
      continue;
    }
    const arrival = start + (mixing + 660 + between(20, 35) + between(0.5, 3)) * 1000;
    day.readings.push({
      id: `r${n + 1}`,
      instrumentId: instruments[reader].id,
      analyte: 'cCRP',
      sampleId: labelled ? `T-${n + 1}` : null,
      patientRef: null,
      arrivedAt: new Date(Math.round(arrival)),
      assignedOrderId: orderId,
    });
    freeAt[reader] = arrival + between(10, 40) * 1000;
  }
  return day;
}

/**
 * The naive rule the matcher must beat: the open order whose start + 12 min is nearest the arrival, on
 * the same reader when the order names one. Returns top-1 hits over the day.
 */
export function naiveTop1(day: ReplayDay): number {
  const closed = new Set<string>();
  let hits = 0;
  for (const r of [...day.readings].sort((a, b) => a.arrivedAt.getTime() - b.arrivedAt.getTime())) {
    const t = r.arrivedAt.getTime();
    const open = day.orders.filter((o) => !closed.has(o.id) && o.startedAt.getTime() <= t && (!o.instrumentId || o.instrumentId === r.instrumentId));
    let best: string | null = null;
    let bestOff = Infinity;
    for (const o of open) {
      const off = Math.abs(o.startedAt.getTime() + 720_000 - t);
      if (off < bestOff) {
        bestOff = off;
        best = o.id;
      }
    }
    if (best === r.assignedOrderId) hits += 1;
    if (r.assignedOrderId) closed.add(r.assignedOrderId);
  }
  return hits;
}
