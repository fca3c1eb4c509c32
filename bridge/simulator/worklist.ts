import { bridgeWorklistSchema, type WorklistItem } from '../../lib/validation/readings';
import { errorMessage, silentLog, type Log } from '../log';
import { pause } from './simulate';

// A simulated analyzer that runs only what is on its worklist: the open tests started for it on the Bench.
// When a test is due it sends the sample's results with the tube label and the patient's record number, as
// an analyzer fed by its host would; now and then it also sends a sample nobody started (a control or a
// walk-in run) so Intake shows an unmatched one too.

export interface SimulatedRun {
  /** The tube label as written on the order; null when the order had none. */
  sampleId: string | null;
  /** The patient's record number (ASTM P-3 / HL7 PID-3); null for an unmatched run. */
  patientRef: string | null;
  /** The tests ordered on this sample (null: the analyzer's own choice, for an unmatched run). */
  analytes: string[] | null;
}

export type WorklistSource = () => Promise<WorklistItem[]>;

const itemKey = (item: WorklistItem) => `${item.sampleId ?? ''}|${item.recordNumber}|${item.analyte}|${item.startedAt}`;

/**
 * The runs due now for this instrument: its open tests whose due time has come, not sent before, one run
 * per tube label (or per patient when a test has no label). Marks what it returns as sent.
 */
export function dueRuns(items: readonly WorklistItem[], instrument: string, now: Date, sent: Set<string>): SimulatedRun[] {
  const runs = new Map<string, SimulatedRun>();
  for (const item of items) {
    if (item.instrument !== instrument || new Date(item.dueAt).getTime() > now.getTime() || sent.has(itemKey(item))) continue;
    sent.add(itemKey(item));
    const group = item.sampleId ? `sample:${item.sampleId.toLowerCase()}` : `patient:${item.recordNumber}`;
    const run = runs.get(group) ?? { sampleId: item.sampleId, patientRef: item.recordNumber, analytes: [] };
    if (!run.analytes!.includes(item.analyte)) run.analytes!.push(item.analyte);
    runs.set(group, run);
  }
  return [...runs.values()];
}

/** Reads the worklist from the server with the bridge's token; an unreachable server is an empty list. */
export function serverWorklist(server: string, token: string, log: Log = silentLog): WorklistSource {
  const url = new URL('/api/bridge/worklist', server);
  return async () => {
    try {
      const response = await fetch(url, { headers: { authorization: `Bearer ${token}` } });
      if (!response.ok) throw new Error(`HTTP ${response.status}`);
      return bridgeWorklistSchema.parse(await response.json()).items;
    } catch (error) {
      log.warn(`simulator: worklist unavailable (${errorMessage(error)}); nothing to run`);
      return [];
    }
  };
}

/** Hands out due runs one at a time, polling the worklist while there is nothing to do. */
export function worklistRuns(options: {
  source: WorklistSource;
  instrument: string;
  random: () => number;
  pollMs?: number;
  /** Chance that an unmatched sample follows a run (default one in five). */
  unmatchedChance?: number;
  clock?: () => Date;
}) {
  const sent = new Set<string>();
  const queue: SimulatedRun[] = [];
  const clock = options.clock ?? (() => new Date());
  return {
    async next(signal?: AbortSignal): Promise<SimulatedRun | undefined> {
      while (!queue.length) {
        if (signal?.aborted) return undefined;
        for (const run of dueRuns(await options.source(), options.instrument, clock(), sent)) {
          queue.push(run);
          if (options.random() < (options.unmatchedChance ?? 0.2)) queue.push({ sampleId: null, patientRef: null, analytes: null });
        }
        if (!queue.length && !(await pause(options.pollMs ?? 5_000, signal))) return undefined;
      }
      return queue.shift();
    },
  };
}
