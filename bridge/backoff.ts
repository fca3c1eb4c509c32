export interface RetryPolicy {
  initialMs: number;
  maxMs: number;
}

/** Exponential backoff with jitter: the step doubles per failure up to the cap; half of it is random. */
export function backoffDelay(failures: number, policy: RetryPolicy, random: () => number = Math.random): number {
  const step = Math.min(policy.maxMs, policy.initialMs * 2 ** Math.min(failures, 30));
  return Math.round(step / 2 + (random() * step) / 2);
}

export function formatSeconds(ms: number): string {
  return `${(ms / 1000).toFixed(1)} s`;
}
