import type { EventEmitter } from 'node:events';

/** Resolves with the arguments of the first `event` for which `accept` holds (tests rely on vitest's timeout). */
export function when<Args extends unknown[] = unknown[]>(
  emitter: EventEmitter<any>,
  event: string,
  accept: (...args: Args) => boolean = () => true,
): Promise<Args> {
  return new Promise((resolve) => {
    const listener = (...args: Args) => {
      if (!accept(...args)) return;
      emitter.off(event, listener);
      resolve(args);
    };
    emitter.on(event, listener);
  });
}
