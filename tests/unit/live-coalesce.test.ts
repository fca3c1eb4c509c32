import { describe, expect, it } from 'vitest';
import { StaleKeys } from '@/lib/live/coalesce';
import { revalidates } from '@/app/(clinic)/live';

// The live feed's promise (ARCHITECTURE.md): clients refetch what an event concerns. Coalescing must
// keep that (every touched list refetched after the burst) while a burst costs one refetch per list.
// Common practice, no source: SWR revalidates each matching key once per mutate call (its documented
// mutate(filter) behaviour), so one call per flush is one request per open list.
function harness() {
  const flushes: (() => void)[] = [];
  const calls: ((key: unknown) => boolean)[] = [];
  const stale = new StaleKeys((f) => flushes.push(f), (isStale) => calls.push(isStale));
  return { stale, flushes, calls };
}

const created = (id: string) => revalidates({ type: 'reading.created', clinicId: 'c', id, at: '' });

describe('coalescing live events into refetches', () => {
  it('200 reading.created events schedule one flush and refetch Intake’s list and suggestions once each', () => {
    const { stale, flushes, calls } = harness();
    for (let i = 0; i < 200; i++) stale.mark(created(`r${i}`));
    expect(flushes).toHaveLength(1);
    flushes[0]();
    expect(calls).toHaveLength(1);
    const open = ['/api/readings?status=unassigned', '/api/readings/suggestions', '/api/captures?status=open', '/api/alerts?status=open', '/api/reviews/unreviewed'];
    expect(open.filter(calls[0])).toEqual(['/api/readings?status=unassigned', '/api/readings/suggestions']);
  });

  it('events of different kinds in one burst refetch the union of what they touch', () => {
    const { stale, flushes, calls } = harness();
    stale.mark(created('r1'));
    stale.mark(revalidates({ type: 'reading.assigned', clinicId: 'c', id: 'r1', at: '', patientId: 'p1' }));
    stale.mark(revalidates({ type: 'capture.created', clinicId: 'c', id: 'k1', at: '' }));
    flushes[0]();
    const keys = ['/api/readings', '/api/reviews/unreviewed', '/api/alerts', '/api/orders?status=open', '/api/patients/p1/results', '/api/patients/p2/results', '/api/captures'];
    expect(keys.filter(calls[0])).toEqual(['/api/readings', '/api/reviews/unreviewed', '/api/alerts', '/api/orders?status=open', '/api/patients/p1/results', '/api/captures']);
  });

  it('an event after a flush schedules the next one; a flush with nothing stale refetches nothing', () => {
    const { stale, flushes, calls } = harness();
    stale.mark(created('r1'));
    flushes[0]();
    stale.mark(created('r2'));
    expect(flushes).toHaveLength(2);
    flushes[1]();
    stale.flush();
    expect(calls).toHaveLength(2);
  });

  it('a new reading touches no patient record, review list, alert list or test', () => {
    // Instrument health shows each instrument's last reading, so it refreshes too; nothing patient-, review- or alert-wide does.
    expect(created('r1')).toEqual(['/api/readings', '/api/quality/health']);
  });
});
