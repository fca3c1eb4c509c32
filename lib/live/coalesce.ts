// Coalesces live events into refetches: a burst of events (a bridge's batch, a busy bench) marks SWR key
// prefixes stale, and one refetch per prefix runs when the scheduled flush comes, so a 200-record batch
// costs one refetch of each list it touches, not one per reading. Pure (the caller schedules the flush),
// so it is tested without a browser or a clock.

export class StaleKeys {
  private readonly prefixes = new Set<string>();
  private scheduled = false;

  constructor(
    private readonly schedule: (flush: () => void) => void,
    private readonly refetch: (isStale: (key: unknown) => boolean) => void,
  ) {}

  mark(prefixes: Iterable<string>): void {
    for (const prefix of prefixes) this.prefixes.add(prefix);
    if (this.scheduled || this.prefixes.size === 0) return;
    this.scheduled = true;
    this.schedule(() => this.flush());
  }

  /** Refetches every key under a stale prefix once (one call, so SWR revalidates each key once). */
  flush(): void {
    this.scheduled = false;
    if (this.prefixes.size === 0) return;
    const prefixes = [...this.prefixes];
    this.prefixes.clear();
    this.refetch((key) => typeof key === 'string' && prefixes.some((p) => key.startsWith(p)));
  }
}
