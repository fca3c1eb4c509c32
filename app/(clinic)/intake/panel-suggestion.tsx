'use client';
// The best match for a whole panel (one sample's results), confirmed in one click for all of them.
// A suggestion is only ever put on a patient when a person confirms it.
import { useState } from 'react';
import { buttonClass } from '@/app/components/ui';
import { send } from '@/lib/client/fetcher';
import type { Candidate, Suggestion } from '@/lib/clinical/matching';
import type { IntakeSpecimen } from './intake-board';
import { IdMatchChip, ProbabilityBadge, Reasons } from './suggested-match';

/** The running tests of this patient that the panel's readings fulfil, per the ranked candidates. */
export function panelOrders(specimen: IntakeSpecimen, suggestions: Record<string, Suggestion> | undefined, patientId: string) {
  return specimen.readings
    .map((r) => suggestions?.[r.id]?.candidates.find((c) => c.patientId === patientId && c.orderId)?.orderId ?? null)
    .filter((id): id is string => !!id);
}

export function PanelSuggestion({
  specimen,
  suggestion,
  suggestions,
  onAssigned,
}: {
  specimen: IntakeSpecimen;
  /** The matcher's answer for the panel's first reading that has running tests to weigh. */
  suggestion: Suggestion | undefined | null;
  suggestions: Record<string, Suggestion> | undefined;
  onAssigned: (message: string) => void;
}) {
  const [saving, setSaving] = useState(false);
  const [failure, setFailure] = useState<string | null>(null);
  if (suggestion === undefined) return <span className="text-ink-500">…</span>;
  const candidates: Candidate[] = suggestion?.candidates ?? [];
  if (candidates.length === 0) return <span className="text-ink-500">No running test matches; find the patient with Assign…</span>;
  const [top] = candidates;
  // Only a confident suggestion is offered in one click; otherwise the person checks the tube and picks.
  const confident = suggestion?.confident ?? false;

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
    <div data-testid="suggested-match" data-confident={confident ? 'true' : 'false'} data-top-patient={confident ? top.patientId : undefined}>
      <div className="flex flex-wrap items-center gap-2">
        <ProbabilityBadge candidate={top} confident={confident} />
        <IdMatchChip candidate={top} />
        <span className="font-semibold">{top.patientName}</span>
        <span className="font-mono text-xs text-ink-700">{top.recordNumber}</span>
      </div>
      {!confident ? (
        <p className="mt-1 text-xs font-medium text-signal-600" data-testid="panel-choose">
          Choose between these: {candidates.slice(0, 3).map((c) => c.patientName).join(', ')}. Check the tube, then choose with Assign…
        </p>
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
