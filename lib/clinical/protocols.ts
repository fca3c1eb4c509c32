// Run timing on the bench: a protocol's stages are data, the arithmetic lives here. Pure: no database.
import type { ProtocolStage } from '@/db/schema';

export type { ProtocolStage };

export interface StageWindow extends ProtocolStage {
  startsAt: Date;
  endsAt: Date;
}

export const protocolSeconds = (stages: readonly ProtocolStage[]) => stages.reduce((sum, s) => sum + s.seconds, 0);

/** When a run started at `startedAt` should give its reading: the stages back to back. */
export function dueAt(startedAt: Date, stages: readonly ProtocolStage[]): Date {
  return new Date(startedAt.getTime() + protocolSeconds(stages) * 1000);
}

/** Each stage's start and end for a run started at `startedAt`. */
export function runTimeline(startedAt: Date, stages: readonly ProtocolStage[]): StageWindow[] {
  let at = startedAt.getTime();
  return stages.map((stage) => {
    const startsAt = new Date(at);
    at += stage.seconds * 1000;
    return { ...stage, startsAt, endsAt: new Date(at) };
  });
}

export type RunPhase = 'running' | 'due' | 'overdue';

export interface RunState {
  phase: RunPhase;
  /** The stage the run is in now; null once all stages are over. */
  stage: StageWindow | null;
  secondsToDue: number;
  /** Seconds left in the current stage (0 once due). */
  secondsLeftInStage: number;
}

/**
 * Where a run stands at `now`. It is "due" from the due time until `lateSeconds` after it (the reading
 * should be printing), and "overdue" after that: someone should look at the reader.
 */
export function runState(startedAt: Date, stages: readonly ProtocolStage[], now: Date, lateSeconds: number): RunState {
  const timeline = runTimeline(startedAt, stages);
  const due = dueAt(startedAt, stages).getTime();
  const t = now.getTime();
  const stage = timeline.find((s) => t >= s.startsAt.getTime() && t < s.endsAt.getTime()) ?? null;
  const phase: RunPhase = t < due ? 'running' : t <= due + lateSeconds * 1000 ? 'due' : 'overdue';
  return {
    phase,
    stage,
    secondsToDue: Math.round((due - t) / 1000),
    secondsLeftInStage: stage ? Math.round((stage.endsAt.getTime() - t) / 1000) : 0,
  };
}

/**
 * Whether a stage with a hard limit (re-insert within 10 s) was missed, given how long it actually took.
 * A missed limit aborts the run; the test is still used up.
 */
export function stageLimitMissed(stage: ProtocolStage, actualSeconds: number): boolean {
  return stage.maxSeconds != null && actualSeconds > stage.maxSeconds;
}

/** "11 min 40 s", "45 s", "2 h 5 min": durations in the clinic's words. */
export function formatDuration(totalSeconds: number): string {
  const s = Math.abs(Math.round(totalSeconds));
  if (s < 60) return `${s} s`;
  const minutes = Math.floor(s / 60);
  const seconds = s % 60;
  if (minutes < 60) return seconds ? `${minutes} min ${seconds} s` : `${minutes} min`;
  const hours = Math.floor(minutes / 60);
  const rest = minutes % 60;
  return rest ? `${hours} h ${rest} min` : `${hours} h`;
}

/** A countdown as the bench reads it: 11:40, or -0:20 once past. */
export function formatCountdown(seconds: number): string {
  const sign = seconds < 0 ? '-' : '';
  const s = Math.abs(Math.round(seconds));
  return `${sign}${Math.floor(s / 60)}:${String(s % 60).padStart(2, '0')}`;
}
