import type { EventEmitter } from 'node:events';
import type { BridgeRecord } from '../../lib/validation/readings';
import type { Spool } from '../spool';

/** Resolves with the arguments of the first `event` for which `accept` holds (tests rely on vitest's timeout). */
export function when<Args extends unknown[] = unknown[]>(
  emitter: Pick<EventEmitter, 'on' | 'off'>,
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

/** Resolves with the pending records once the spool holds at least `count`. */
export function spooled(spool: Spool, count: number): Promise<BridgeRecord[]> {
  return new Promise((resolve) => {
    const check = () => {
      if (spool.pending().length < count) return;
      spool.off('appended', check);
      resolve(spool.pending());
    };
    spool.on('appended', check);
    check();
  });
}
