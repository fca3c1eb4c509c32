'use client';
// Lab quality: an administrator is told in the app when a bridge has gone silent (no heartbeat or upload
// within the clinic's timeout), on every page, until it is heard from again.
import Link from 'next/link';
import { useActor } from './actor';
import { useLabHealth } from './admin/instrument-health';

export function BridgeOfflineNotifier() {
  const { role } = useActor();
  if (role !== 'admin') return null;
  return <OfflineBanner />;
}

function OfflineBanner() {
  const { data } = useLabHealth();
  const offline = data?.bridges.filter((b) => b.offline) ?? [];
  if (offline.length === 0) return null;
  return (
    <div role="alert" className="bg-alarm-700 px-4 py-2 text-sm text-white" data-testid="bridge-offline">
      <div className="mx-auto max-w-7xl">
        {offline.map((b) => `Bridge “${b.name}” is offline`).join('; ')} — nothing has arrived from it for more than {data!.offlineAfterMinutes} min.{' '}
        <Link href="/admin#instrument-health-heading" className="font-semibold underline">
          Instrument health
        </Link>
      </div>
    </div>
  );
}
