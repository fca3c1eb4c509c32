'use client';
// The best match for a whole panel (one sample's results), confirmed in one click for all of them.
// A suggestion is only ever put on a patient when a person confirms it.
import { useState } from 'react';
import { buttonClass } from '@/app/components/ui';
import { send } from '@/lib/client/fetcher';
import type { Candidate } from '@/lib/clinical/matching';
import type { IntakeSpecimen } from './intake-board';
import { Reasons, StrengthBadge } from './suggested-match';

/** The running tests of this patient that the panel's readings fulfil, per the ranked candidates. */
export function panelOrders(specimen: IntakeSpecimen, suggestions: Record<string, Candidate[]> | undefined, patientId: string) {
  return specimen.readings
    .map((r) => suggestions?.[r.id]?.find((c) => c.patientId === patientId && c.orderId)?.orderId ?? null)
    .filter((id): id is string => !!id);
}

export function PanelSuggestion({
  specimen,
  candidates,
  suggestions,
  onAssigned,
}: {
  specimen: IntakeSpecimen;
  candidates: Candidate[] | undefined;
  suggestions: Record<string, Candidate[]> | undefined;
  onAssigned: (message: string) => void;
}) {
  const [saving, setSaving] = useState(false);
  const [failure, setFailure] = useState<string | null>(null);
  if (!candidates) return <span className="text-ink-500">…</span>;
  if (candidates.length === 0) return <span className="text-ink-500">No running test matches; find the patient with Assign…</span>;
  const [top] = candidates;
  const tied = top.tiedWith > 0;

  const confirm = async () => {
    setSaving(true);
    setFailure(null);
    try {
      await send(`/api/specimens/${specimen.id}/assign`, 'POST', {
        patientId: top.patientId,
        readingIds: specimen.readings.map((r) => r.id),
        orderIds: panelOrders(specimen, suggestions, top.patientId),
        method: 'suggestion',
      });
      onAssigned(`${specimen.readings.length} results assigned to ${top.patientName} (${top.recordNumber}).${top.speciesWarning ? ` ${top.speciesWarning}` : ''}`);
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not assign.');
      setSaving(false);
    }
  };

  return (
    <div data-testid="suggested-match" data-top-patient={top.patientId}>
      <div className="flex flex-wrap items-center gap-2">
        <StrengthBadge candidate={top} />
        <span className="font-semibold">{top.patientName}</span>
        <span className="font-mono text-xs text-ink-700">{top.recordNumber}</span>
      </div>
      {tied ? (
        <p className="mt-1 text-xs font-medium text-signal-600">Tied with another test: check the tube, then choose with Assign…</p>
      ) : (
        <button type="button" className={`${buttonClass.secondary} mt-1`} data-testid="confirm-suggestion" data-patient-id={top.patientId} disabled={saving} onClick={confirm}>
          Confirm all {specimen.readings.length} for {top.patientName}
        </button>
      )}
      {top.speciesWarning && <p className="mt-1 text-xs font-medium text-alarm-700">{top.speciesWarning}</p>}
      <details className="mt-1">
        <summary className="cursor-pointer text-xs text-ink-700">Why</summary>
        <Reasons candidate={top} />
      </details>
      {failure && (
        <p className="mt-1 text-xs font-medium text-alarm-700" role="alert">
          {failure}
        </p>
      )}
    </div>
  );
}
