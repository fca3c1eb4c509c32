'use client';
// Lab quality: a reading that was a QC control run is taken out of Intake by hand. It is matched to a
// control material by its sample ID when it can be; otherwise the QC page asks which level it was.
import { useState } from 'react';
import { buttonClass } from '@/app/components/ui';
import { send } from '@/lib/client/fetcher';
import { useActor } from '../actor';

export function MarkControlButton({ readingId, onDone }: { readingId: string; onDone: (message: string) => void }) {
  const { role } = useActor();
  const [asking, setAsking] = useState(false);
  const [failure, setFailure] = useState<string | null>(null);
  if (role !== 'admin' && role !== 'technician') return null;
  if (!asking) {
    return (
      <button type="button" className={buttonClass.secondary} onClick={() => setAsking(true)}>
        QC run…
      </button>
    );
  }
  return (
    <span className="inline-flex flex-wrap items-center gap-1 text-xs" role="group" aria-label="Mark as a QC control run">
      <span>A control run, not a patient?</span>
      <button
        type="button"
        className={buttonClass.danger}
        autoFocus
        onClick={async () => {
          try {
            await send(`/api/readings/${readingId}/control`, 'POST', {});
            onDone('Marked as a QC control run: it is listed on the QC page and never goes on a patient.');
          } catch (error) {
            setFailure(error instanceof Error ? error.message : 'Could not mark it.');
          }
        }}
      >
        Yes, QC run
      </button>
      <button type="button" className={buttonClass.quiet} onClick={() => setAsking(false)}>
        No
      </button>
      {failure && <span role="alert" className="text-alarm-700">{failure}</span>}
    </span>
  );
}
