import { describe, expect, it } from 'vitest';
import { bridgeOffline } from '@/lib/quality/health';

// A bridge heartbeats every 30 s (bridge/uploader.ts default); missing a few in a row means it is gone
// (common practice, no source). The timeout is the clinic's setting, 3 min by default.
describe('bridge offline after a timeout', () => {
  const now = new Date('2026-12-02T10:00:00Z');
  it('is online within the timeout, offline after it, and offline when never heard from', () => {
    expect(bridgeOffline(new Date('2026-12-02T09:57:30Z'), now, 3)).toBe(false);
    expect(bridgeOffline(new Date('2026-12-02T09:57:00Z'), now, 3)).toBe(false);
    expect(bridgeOffline(new Date('2026-12-02T09:56:59Z'), now, 3)).toBe(true);
    expect(bridgeOffline(null, now, 3)).toBe(true);
  });
});
