'use client';
// The match suggestion for one reading, with its probability and the reasons in plain words. Only a
// confident suggestion is offered with one-click Confirm; otherwise the candidates are shown side by side
// and nothing is preselected. A suggestion is only ever put on a patient when a person confirms it.
import { useState } from 'react';
import { buttonClass } from '@/app/components/ui';
import { send } from '@/lib/client/fetcher';
import type { Candidate, Suggestion } from '@/lib/clinical/matching';

/** "≥ 99.9 %", "62.4 %", "< 0.1 %": a probability as the bench reads it. */
export function formatProbability(p: number): string {
  if (p >= 0.999) return '≥ 99.9 %';
  if (p < 0.001) return '< 0.1 %';
  return `${(p * 100).toFixed(1)} %`;
}

export function ProbabilityBadge({ candidate, confident }: { candidate: Candidate; confident: boolean }) {
  return (
    <span
      className={`rounded px-1.5 py-0.5 text-[11px] font-semibold tracking-wide ${confident ? 'bg-moss-100 text-moss-700' : 'bg-signal-100 text-signal-600'}`}
      data-testid="match-probability"
    >
      {formatProbability(candidate.probability)}
    </span>
  );
}

/** A short visible mark when a printed ID, not timing, names this candidate. */
export function IdMatchChip({ candidate }: { candidate: Candidate }) {
  if (!candidate.reasons.some((r) => r.code === 'sample-id-match' || r.code === 'record-id-match')) return null;
  return <span className="rounded bg-moss-100 px-1.5 py-0.5 text-[11px] font-semibold text-moss-700">ID match</span>;
}

export function Reasons({ candidate }: { candidate: Candidate }) {
  return (
    <ul className="mt-1 space-y-0.5 text-xs" data-testid="match-reasons">
      {candidate.reasons.map((r, i) => (
        <li key={`${r.code}-${i}`} className={r.effect === 'against' ? 'text-alarm-700' : r.effect === 'for' ? 'text-ink-900' : 'text-ink-500'}>
          <span aria-hidden="true">{r.effect === 'against' ? '✗ ' : r.effect === 'for' ? '✓ ' : '· '}</span>
          {r.text}
        </li>
      ))}
    </ul>
  );
}

/** The cell in an Intake row. */
export function SuggestedMatch({
  readingId,
  analyte,
  suggestion,
  onAssigned,
}: {
  readingId: string;
  analyte: string;
  suggestion: Suggestion | undefined;
  onAssigned: (message: string) => void;
}) {
  const [saving, setSaving] = useState(false);
  const [failure, setFailure] = useState<string | null>(null);
  if (!suggestion) return <span className="text-ink-500">…</span>;
  const { candidates, confident } = suggestion;
  if (candidates.length === 0) return <span className="text-ink-500">No running test matches; find the patient with Assign…</span>;

  const confirm = async (c: Candidate) => {
    setSaving(true);
    setFailure(null);
    try {
      await send(`/api/readings/${readingId}/assign`, 'POST', { patientId: c.patientId, orderId: c.orderId ?? undefined, method: 'suggestion' });
      onAssigned(`${analyte} assigned to ${c.patientName} (${c.recordNumber}).${c.speciesWarning ? ` ${c.speciesWarning}` : ''}`);
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not assign.');
      setSaving(false);
    }
  };
  const failed = failure && (
    <p className="mt-1 text-xs font-medium text-alarm-700" role="alert">
      {failure}
    </p>
  );

  if (confident) {
    const [top] = candidates;
    return (
      <div className="min-w-64 max-w-md" data-testid="suggested-match" data-confident="true" data-top-patient={top.patientId}>
        <div className="flex flex-wrap items-center gap-2">
          <ProbabilityBadge candidate={top} confident />
          <IdMatchChip candidate={top} />
          <span className="font-semibold">{top.patientName}</span>
          <span className="font-mono text-xs text-ink-700">{top.recordNumber}</span>
          <button type="button" className={buttonClass.secondary} data-testid="confirm-suggestion" data-patient-id={top.patientId} disabled={saving} onClick={() => confirm(top)}>
            Confirm {top.patientName}
          </button>
        </div>
        {top.speciesWarning && <p className="mt-1 text-xs font-medium text-alarm-700">{top.speciesWarning}</p>}
        <details className="mt-1">
          <summary className="cursor-pointer text-xs text-ink-700">Why</summary>
          <Reasons candidate={top} />
        </details>
        {failed}
      </div>
    );
  }

  // Not sure: the candidates side by side, nothing preselected; the technician checks the tube and picks.
  return (
    <div className="min-w-64" data-testid="suggested-match" data-confident="false">
      <p className="text-xs font-semibold uppercase tracking-wide text-signal-600">Choose between these</p>
      <p className="text-xs text-ink-700">Not sure enough to suggest one: check the tube label before choosing.</p>
      <ul className="mt-1 grid gap-2 sm:grid-cols-2" data-testid="match-choices">
        {candidates.map((c) => (
          <li key={`${c.patientId}-${c.orderId}`} className="rounded border border-ink-100 p-2" data-testid="match-choice" data-patient-id={c.patientId}>
            <div className="flex flex-wrap items-center gap-2 text-sm">
              <ProbabilityBadge candidate={c} confident={false} />
              <span className="font-medium">{c.patientName}</span>
              <span className="font-mono text-xs">{c.recordNumber}</span>
            </div>
            {c.speciesWarning && <p className="mt-1 text-xs font-medium text-alarm-700">{c.speciesWarning}</p>}
            <Reasons candidate={c} />
            <button type="button" className={`${buttonClass.quiet} mt-1`} disabled={saving} onClick={() => confirm(c)}>
              It is {c.patientName}
            </button>
          </li>
        ))}
      </ul>
      {suggestion.noneProbability >= 0.01 && (
        <p className="mt-1 text-xs text-ink-700">None of these: {formatProbability(suggestion.noneProbability)} (use Assign… to find the patient).</p>
      )}
      {failed}
    </div>
  );
}
