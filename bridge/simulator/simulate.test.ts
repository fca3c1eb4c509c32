import { getEventListeners } from 'node:events';
import { describe, expect, it } from 'vitest';
import { orAbort } from './simulate';

// A simulator waits for its client before every slip; each wait used to leave an 'abort' listener on the
// run's signal, so a demo left running warned of a listener leak within half an hour.
describe('orAbort', () => {
  it('settles with the promise and leaves no listener behind', async () => {
    const controller = new AbortController();
    for (let i = 0; i < 50; i++) expect(await orAbort(Promise.resolve(i), controller.signal)).toBe(i);
    await expect(orAbort(Promise.reject(new Error('gone')), controller.signal)).rejects.toThrow('gone');
    expect(getEventListeners(controller.signal, 'abort')).toHaveLength(0);
  });

  it('settles with undefined as soon as the signal aborts', async () => {
    const controller = new AbortController();
    const waiting = orAbort(new Promise<string>(() => {}), controller.signal);
    controller.abort();
    expect(await waiting).toBeUndefined();
    expect(await orAbort(Promise.resolve('late'), controller.signal)).toBeUndefined();
  });
});
