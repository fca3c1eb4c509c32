// Westgard multirule QC (“A multi-rule Shewhart chart for quality control in clinical chemistry”,
// Clin Chem 1981;27:493–501; citation and rule wording from memory, verify).
// Pure: no database, no clock. Used by the QC page, the Levey-Jennings chart and the "QC failed" mark.
//
// Rules as defined there (control observations expressed as z = (value − target mean) / target SD):
//   1-2s  one observation beyond ±2 SD: a warning that calls for inspection, not a rejection.
//   1-3s  one observation beyond ±3 SD.
//   2-2s  two consecutive observations beyond the same 2 SD limit (+2 SD or −2 SD): within one control
//         level across runs, or across the levels of one run.
//   R-4s  within one run, one observation beyond +2 SD and another beyond −2 SD.
//   4-1s  four consecutive observations beyond the same 1 SD limit: within a level, or across levels.
//   10-x  ten consecutive observations on the same side of the mean: within a level, or across levels.
// "Beyond" is strict (exactly 2.0 SD does not exceed 2 SD); exactly on the mean breaks a 10-x run.

export type WestgardRule = '1-2s' | '1-3s' | '2-2s' | 'R-4s' | '4-1s' | '10-x';
export const REJECTION_RULES: readonly WestgardRule[] = ['1-3s', '2-2s', 'R-4s', '4-1s', '10-x'];

export interface QcObservation {
  /** The QC reading's id, so a violation can name the runs involved. */
  id: string;
  /** The analytical run it was measured in: levels measured together share a run id. */
  runId: string;
  /** Control material (level) it measures. */
  level: string;
  value: number;
  mean: number;
  sd: number;
  /** Sorting key: when it was measured (ms since epoch or any increasing number). */
  at: number;
}

export interface Violation {
  rule: WestgardRule;
  /** within-level: one control level across runs; across-levels: the levels together; within-run: one run. */
  scope: 'within-level' | 'across-levels' | 'within-run';
  /** The control level, for within-level violations. */
  level: string | null;
  /** The observations that make the violation, oldest first. */
  observationIds: string[];
  /** The runs those observations come from, oldest first. */
  runIds: string[];
  /** Plain words for people. */
  message: string;
}

export type RunStatus = 'accepted' | 'warning' | 'rejected';

export interface RunEvaluation {
  runId: string;
  at: number;
  status: RunStatus;
  violations: Violation[];
  observations: QcObservation[];
}

export interface WestgardOptions {
  /**
   * The 1981 procedure checks the rejection rules only when 1-2s fires in the run. Off by default: with a
   * computer every rule can be checked on every run (common practice, no source), so a 4-1s or 10-x trend
   * rejects even when the last point is inside 2 SD.
   */
  warningGate?: boolean;
}

export const zScore = (o: Pick<QcObservation, 'value' | 'mean' | 'sd'>) => (o.value - o.mean) / o.sd;

const RULE_WORDS: Record<WestgardRule, string> = {
  '1-2s': 'one control beyond 2 SD (warning)',
  '1-3s': 'one control beyond 3 SD',
  '2-2s': 'two consecutive controls beyond the same 2 SD limit',
  'R-4s': 'one control beyond +2 SD and another beyond −2 SD in the same run',
  '4-1s': 'four consecutive controls beyond the same 1 SD limit',
  '10-x': 'ten consecutive controls on the same side of the mean',
};

function violation(rule: WestgardRule, scope: Violation['scope'], obs: QcObservation[]): Violation {
  const runIds = [...new Set(obs.map((o) => o.runId))];
  const levels = [...new Set(obs.map((o) => o.level))];
  const where =
    scope === 'within-level' ? `level ${levels[0]}` : scope === 'within-run' ? 'within the run' : `across levels ${levels.join(', ')}`;
  return {
    rule,
    scope,
    level: scope === 'within-level' ? levels[0] : null,
    observationIds: obs.map((o) => o.id),
    runIds,
    message: `${rule}: ${RULE_WORDS[rule]} (${where}; ${runIds.length === 1 ? 'run' : 'runs'} ${runIds.join(', ')})`,
  };
}

const byTime = (a: QcObservation, b: QcObservation) => a.at - b.at || a.level.localeCompare(b.level) || a.id.localeCompare(b.id);

/** Sign of the side an observation is on for a limit of k SD: +1 above +k, −1 below −k, 0 inside. */
const side = (o: QcObservation, k: number) => {
  const z = zScore(o);
  return z > k ? 1 : z < -k ? -1 : 0;
};

/**
 * A run of n consecutive observations beyond the same k-SD limit that ends at `end` within `sequence`
 * (k = 0 means "same side of the mean").
 */
function consecutiveEndingAt(sequence: QcObservation[], end: number, n: number, k: number): QcObservation[] | null {
  if (end + 1 < n) return null;
  const window = sequence.slice(end + 1 - n, end + 1);
  const s = side(window[0], k);
  if (s === 0) return null;
  return window.every((o) => side(o, k) === s) ? window : null;
}

/**
 * Evaluates one run (the observations whose runId is `runId`) against the history before it.
 * `history` holds earlier observations that count (rejected runs' values should be left out by the caller).
 */
export function evaluateRun(history: QcObservation[], run: QcObservation[], options: WestgardOptions = {}): RunEvaluation {
  if (run.length === 0) throw new Error('a run needs at least one observation');
  for (const o of [...history, ...run]) {
    if (!(o.sd > 0) || !Number.isFinite(o.value) || !Number.isFinite(o.mean)) {
      throw new Error(`observation ${o.id}: target SD must be positive and values finite`);
    }
  }
  const current = [...run].sort(byTime);
  const currentIds = new Set(current.map((o) => o.id));
  const all = [...history, ...current].sort(byTime);
  const violations: Violation[] = [];
  const seen = new Set<string>();
  const add = (v: Violation) => {
    const key = `${v.rule}|${[...v.observationIds].sort().join(',')}`;
    if (seen.has(key)) return;
    seen.add(key);
    violations.push(v);
  };

  for (const o of current) {
    if (side(o, 3) !== 0) add(violation('1-3s', current.length > 1 ? 'within-run' : 'within-level', [o]));
  }

  // R-4s: within the run only.
  const high = current.filter((o) => side(o, 2) === 1);
  const low = current.filter((o) => side(o, 2) === -1);
  if (high.length > 0 && low.length > 0) add(violation('R-4s', 'within-run', [...low, ...high].sort(byTime)));

  const sequences: { scope: 'within-level' | 'across-levels'; seq: QcObservation[] }[] = [];
  for (const level of new Set(current.map((o) => o.level))) {
    sequences.push({ scope: 'within-level', seq: all.filter((o) => o.level === level) });
  }
  sequences.push({ scope: 'across-levels', seq: all });
  const sequenceRules: [WestgardRule, number, number][] = [
    ['2-2s', 2, 2],
    ['4-1s', 4, 1],
    ['10-x', 10, 0],
  ];
  for (const [rule, n, k] of sequenceRules) {
    for (const { scope, seq } of sequences) {
      seq.forEach((o, i) => {
        if (!currentIds.has(o.id)) return;
        const hit = consecutiveEndingAt(seq, i, n, k);
        if (!hit) return;
        const levels = new Set(hit.map((h) => h.level));
        // A window of one level found in the combined sequence is the within-level violation already.
        if (scope === 'across-levels' && levels.size === 1) return;
        // 2-2s across levels is defined within one run; across runs it is checked per level only.
        if (rule === '2-2s' && scope === 'across-levels' && !hit.every((h) => currentIds.has(h.id))) return;
        add(violation(rule, scope, hit));
      });
    }
  }

  const warning = current.filter((o) => side(o, 2) !== 0);
  const gated = options.warningGate && warning.length === 0;
  const rejections = gated ? [] : violations;
  const warnings = warning.length > 0 && rejections.length === 0 ? warning.map((o) => violation('1-2s', 'within-level', [o])) : [];
  return {
    runId: current[0].runId,
    at: current[current.length - 1].at,
    status: rejections.length > 0 ? 'rejected' : warnings.length > 0 ? 'warning' : 'accepted',
    violations: [...rejections, ...warnings],
    observations: current,
  };
}

/**
 * Evaluates every run in order. A rejected run's values stay on the chart but are not carried into later
 * runs' checks: the fault was corrected before the rerun (common practice, no source).
 */
export function evaluateHistory(observations: QcObservation[], options: WestgardOptions = {}): RunEvaluation[] {
  const runs = new Map<string, QcObservation[]>();
  for (const o of [...observations].sort(byTime)) {
    const list = runs.get(o.runId) ?? [];
    list.push(o);
    runs.set(o.runId, list);
  }
  const ordered = [...runs.values()].sort((a, b) => a[a.length - 1].at - b[b.length - 1].at);
  const counted: QcObservation[] = [];
  const out: RunEvaluation[] = [];
  for (const run of ordered) {
    const result = evaluateRun(counted, run, options);
    out.push(result);
    if (result.status !== 'rejected') counted.push(...run);
  }
  return out;
}

/**
 * Groups QC readings into analytical runs: levels measured close together form one run; a second reading
 * of a level already in the run, or a gap longer than `gapMs`, starts a new one (common practice, no source).
 */
export function groupIntoRuns<T extends { id: string; level: string; at: number }>(
  items: T[],
  gapMs = 60 * 60 * 1000,
): (T & { runId: string })[] {
  const sorted = [...items].sort((a, b) => a.at - b.at || a.id.localeCompare(b.id));
  const out: (T & { runId: string })[] = [];
  let runId = '';
  let levels = new Set<string>();
  let last = -Infinity;
  for (const item of sorted) {
    if (!runId || levels.has(item.level) || item.at - last > gapMs) {
      runId = item.id;
      levels = new Set();
    }
    levels.add(item.level);
    last = item.at;
    out.push({ ...item, runId });
  }
  return out;
}

/** Latest status of a history: rejected until a later run is accepted (a 1-2s warning is accepted). */
export function currentStatus(evaluations: RunEvaluation[]): RunStatus | 'none' {
  return evaluations.length === 0 ? 'none' : evaluations[evaluations.length - 1].status;
}
