'use client';
// The ranked matches for one reading, with the reasons in plain words. A suggestion is only ever put on a
// patient when a person confirms it.
import { useState } from 'react';
import { buttonClass } from '@/app/components/ui';
import { send } from '@/lib/client/fetcher';
import type { Candidate } from '@/lib/clinical/matching';

export const STRENGTH_LABEL: Record<Candidate['strength'], string> = {
  exact: 'ID match',
  strong: 'Strong match',
  possible: 'Possible match',
  weak: 'Weak match',
};

const strengthClass: Record<Candidate['strength'], string> = {
  exact: 'bg-moss-100 text-moss-700',
  strong: 'bg-moss-100 text-moss-700',
  possible: 'bg-signal-100 text-signal-600',
  weak: 'bg-ink-100 text-ink-700',
};

export function StrengthBadge({ candidate }: { candidate: Candidate }) {
  return (
    <span className={`rounded px-1.5 py-0.5 text-[11px] font-semibold uppercase tracking-wide ${strengthClass[candidate.strength]}`}>
      {candidate.tiedWith > 0 ? 'Tied' : STRENGTH_LABEL[candidate.strength]}
    </span>
  );
}

export function Reasons({ candidate }: { candidate: Candidate }) {
  return (
    <ul className="mt-1 space-y-0.5 text-xs" data-testid="match-reasons">
      {candidate.reasons.map((r) => (
        <li key={r.code} className={r.points < 0 ? 'text-alarm-700' : r.points > 0 ? 'text-ink-900' : 'text-ink-500'}>
          <span aria-hidden="true">{r.points < 0 ? '✗ ' : r.points > 0 ? '✓ ' : '· '}</span>
          {r.text}
        </li>
      ))}
    </ul>
  );
}

/** The cell in an Intake row: the best match with a one-click confirm, and the others on request. */
export function SuggestedMatch({
  readingId,
  analyte,
  candidates,
  onAssigned,
}: {
  readingId: string;
  analyte: string;
  candidates: Candidate[] | undefined;
  onAssigned: (message: string) => void;
}) {
  const [saving, setSaving] = useState<string | null>(null);
  const [failure, setFailure] = useState<string | null>(null);
  if (!candidates) return <span className="text-ink-500">…</span>;
  if (candidates.length === 0) return <span className="text-ink-500">No running test matches; find the patient with Assign…</span>;
  const [top] = candidates;
  const tied = top.tiedWith > 0;

  const confirm = async (c: Candidate) => {
    setSaving(c.patientId + (c.orderId ?? ''));
    setFailure(null);
    try {
      await send(`/api/readings/${readingId}/assign`, 'POST', { patientId: c.patientId, orderId: c.orderId ?? undefined, method: 'suggestion' });
      onAssigned(`${analyte} assigned to ${c.patientName} (${c.recordNumber}).${c.speciesWarning ? ` ${c.speciesWarning}` : ''}`);
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not assign.');
      setSaving(null);
    }
  };

  const confirmButton = (c: Candidate) => (
    <button
      type="button"
      className={buttonClass.secondary}
      data-testid="confirm-suggestion"
      data-patient-id={c.patientId}
      disabled={saving !== null}
      onClick={() => confirm(c)}
    >
      Confirm {c.patientName}
    </button>
  );

  return (
    <div className="min-w-64 max-w-md" data-testid="suggested-match" data-top-patient={top.patientId}>
      <div className="flex flex-wrap items-center gap-2">
        <StrengthBadge candidate={top} />
        <span className="font-semibold">{top.patientName}</span>
        <span className="font-mono text-xs text-ink-700">{top.recordNumber}</span>
        {!tied && confirmButton(top)}
      </div>
      {tied && <p className="mt-1 text-xs font-medium text-signal-600">Tied with another test: check the tube before choosing.</p>}
      {top.speciesWarning && <p className="mt-1 text-xs font-medium text-alarm-700">{top.speciesWarning}</p>}
      <details className="mt-1">
        <summary className="cursor-pointer text-xs text-ink-700">Why{candidates.length > 1 ? ` · ${candidates.length - 1} other candidate${candidates.length > 2 ? 's' : ''}` : ''}</summary>
        <ol className="mt-1 space-y-2">
          {candidates.map((c, i) => (
            <li key={`${c.patientId}-${c.orderId}`} className="rounded border border-ink-100 p-2">
              <div className="flex flex-wrap items-center gap-2 text-sm">
                <span className="text-ink-500">{i + 1}.</span>
                <span className="font-medium">{c.patientName}</span>
                <span className="font-mono text-xs">{c.recordNumber}</span>
                <StrengthBadge candidate={c} />
                {(i > 0 || tied) && confirmButton(c)}
              </div>
              <Reasons candidate={c} />
            </li>
          ))}
        </ol>
      </details>
      {failure && <p className="mt-1 text-xs font-medium text-alarm-700" role="alert">{failure}</p>}
    </div>
  );
}
