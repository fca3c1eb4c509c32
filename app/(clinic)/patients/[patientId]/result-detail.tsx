'use client';
import { useDebounced } from '@/app/components/use-debounced';
// One result opened on the chart: why it is flagged, its history, comments and sign-off, and the
// corrections (move to another patient, void) that keep the history.
import { useState } from 'react';
import useSWR from 'swr';
import { Modal } from '@/app/components/modal';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher, send } from '@/lib/client/fetcher';
import { formatMeasured, formatDateTime } from '@/lib/format';
import type { PatientView } from '@/lib/patients';
import { useActor } from '../../actor';
import type { ChartAnalyte, ChartResult } from './patient-results';

interface HistoryEntry {
  at: string;
  action: string;
  details: Record<string, unknown>;
  actorName: string | null;
  byBridge: string | null;
}

const ACTION_LABEL: Record<string, string> = {
  'reading.received': 'Received from the bench',
  'reading.imported': 'Imported from a capture file',
  'reading.assigned': 'Assigned',
  'reading.reassigned': 'Moved to this patient',
  'reading.voided': 'Voided',
  'reading.reviewed': 'Signed off as reviewed',
  'reading.commented': 'Comment',
  'reading.critical-acknowledged': 'Critical result acknowledged',
  'reading.merged': 'Came with a merged duplicate record',
};

const METHOD_LABEL: Record<string, string> = {
  manual: 'chosen by search',
  suggestion: 'suggested match confirmed',
  'auto-sample-id': 'automatically, exact sample ID (clinic rule)',
};

function describe(entry: HistoryEntry): string {
  const d = entry.details;
  const parts = [ACTION_LABEL[entry.action] ?? entry.action];
  if (typeof d.method === 'string') parts.push(`(${METHOD_LABEL[d.method] ?? d.method})`);
  if (typeof d.reason === 'string') parts.push(`— reason: ${d.reason}`);
  if (typeof d.comment === 'string') parts.push(`— “${d.comment}”`);
  if (typeof d.recordNumber === 'string') parts.push(`to ${d.recordNumber}`);
  return parts.join(' ');
}

export function ResultDetail({
  result,
  analyte,
  patientId,
  patientName,
  panel,
  onMoved,
}: {
  result: ChartResult;
  analyte: ChartAnalyte | undefined;
  patientId: string;
  patientName: string;
  /** The results on this chart measured on the same sample (this one included): moved or voided together by default. */
  panel: ChartResult[];
  onMoved: () => void;
}) {
  const actor = useActor();
  const detail = useSWR<{ reading: { history: HistoryEntry[]; raw: string; instrumentRange: string | null; resultStatus: string | null } }>(
    // As seen from this chart: another patient's comments and sign-offs stay with that patient.
    `/api/readings/${result.id}?patientId=${patientId}`,
    fetcher,
  );
  const sent = detail.data?.reading;
  const [moving, setMoving] = useState(false);
  const [voiding, setVoiding] = useState(false);
  const c = result.clinical;
  return (
    <div className="grid gap-4 md:grid-cols-2" data-testid="result-detail">
      <div className="space-y-2 text-sm">
        <p>
          <span className="font-semibold">{formatMeasured(c.display, analyte?.decimals ?? 1)}</span>
          {result.unit && c.display.unit !== result.unit && <span className="text-ink-500"> (printed {result.comparator ?? ''}{result.value} {result.unit})</span>}
        </p>
        {c.flag && <p>{c.flag.certain ? `Flag: ${c.flag.text}.` : `${c.flag.text}.`}</p>}
        {sent?.resultStatus && sent.resultStatus !== 'final' && (
          <Notice tone="error">The instrument sent this as a {sent.resultStatus} result.</Notice>
        )}
        {sent?.instrumentRange && <p className="text-ink-700">Range printed by the instrument: {sent.instrumentRange}</p>}
        {c.delta && <Notice tone="error">{c.delta.text}</Notice>}
        {c.speciesWarning && <Notice tone="error">{c.speciesWarning}</Notice>}
        {c.problems.map((p) => (
          <p key={p} className="text-signal-600">
            {p}
          </p>
        ))}
        {c.alert && (
          <p className={c.alert.acknowledged ? 'text-ink-700' : 'font-semibold text-alarm-700'}>
            {c.alert.acknowledged ? 'Critical alert acknowledged.' : 'Critical alert open: acknowledge it on Review.'}
          </p>
        )}
        <h4 className="pt-2 text-xs font-semibold uppercase tracking-wide text-ink-500">History</h4>
        <ol className="space-y-1 text-xs" data-testid="result-history">
          {detail.data?.reading.history.map((h, i) => (
            <li key={i}>
              <span className="text-ink-500">{formatDateTime(h.at)}</span> · {describe(h)} · {h.actorName ?? (h.byBridge ? 'bridge' : 'system')}
            </li>
          ))}
        </ol>
      </div>
      <div className="space-y-3">
        {c.comments.length > 0 && (
          <ul className="space-y-1 text-sm">
            {c.comments.map((m, i) => (
              <li key={i} className="rounded bg-white p-2 shadow-inner">
                “{m.comment}” <span className="text-xs text-ink-500">— {m.by}, {formatDateTime(m.at)}</span>
              </li>
            ))}
          </ul>
        )}
        {actor.role === 'veterinarian' && <ReviewForm result={result} />}
        {actor.role !== 'admin' && (
          <div className="flex flex-wrap gap-2 border-t border-ink-100 pt-3">
            <button type="button" className={buttonClass.secondary} onClick={() => setMoving(true)}>
              {panel.length > 1 ? 'Move to another patient (panel or this result)…' : 'Move to another patient…'}
            </button>
            <button type="button" className={buttonClass.danger} onClick={() => setVoiding(true)}>
              {panel.length > 1 ? 'Void (panel or this result)…' : 'Void result…'}
            </button>
          </div>
        )}
      </div>
      {moving && (
        <ReassignDialog
          result={result}
          panel={panel}
          fromName={patientName}
          fromId={patientId}
          onClose={(moved) => {
            setMoving(false);
            if (moved) onMoved();
          }}
        />
      )}
      {voiding && (
        <VoidFromRecordDialog
          result={result}
          panel={panel}
          onClose={(voided) => {
            setVoiding(false);
            if (voided) onMoved();
          }}
        />
      )}
    </div>
  );
}

function ReviewForm({ result }: { result: ChartResult }) {
  const [comment, setComment] = useState('');
  const [reviewed, setReviewed] = useState(!result.clinical.reviewed);
  const [failure, setFailure] = useState<string | null>(null);
  const [saved, setSaved] = useState<string | null>(null);
  const submit = async (e: React.FormEvent) => {
    e.preventDefault();
    setFailure(null);
    try {
      await send(`/api/readings/${result.id}/reviews`, 'POST', { comment: comment || undefined, reviewed: reviewed && !result.clinical.reviewed });
      setComment('');
      setSaved('Saved.');
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not save.');
    }
  };
  return (
    <form onSubmit={submit} className="space-y-2" aria-label="Review this result">
      <Field id={`comment-${result.id}`} label="Comment" error={failure ?? undefined}>
        <textarea id={`comment-${result.id}`} rows={2} className={inputClass} value={comment} onChange={(e) => setComment(e.target.value)} />
      </Field>
      {!result.clinical.reviewed && (
        <label className="flex items-center gap-2 text-sm">
          <input type="checkbox" checked={reviewed} onChange={(e) => setReviewed(e.target.checked)} /> Sign off as reviewed
        </label>
      )}
      <div className="flex items-center gap-3">
        <button type="submit" className={buttonClass.primary}>
          {reviewed && !result.clinical.reviewed ? 'Sign off' : 'Add comment'}
        </button>
        {saved && <span className="text-sm text-moss-700">{saved}</span>}
      </div>
    </form>
  );
}

/**
 * Whole panel or this result only: a result measured with others on one sample is corrected with them by
 * default (a misread tube label moves every result of the tube); "only this result" splits it off.
 */
function PanelScope({ result, panel, whole, onChange, verb }: { result: ChartResult; panel: ChartResult[]; whole: boolean; onChange: (whole: boolean) => void; verb: string }) {
  if (panel.length < 2) return null;
  return (
    <fieldset className="mb-3 space-y-1 text-sm" data-testid="panel-scope">
      <legend className="mb-1 font-medium">What to {verb.toLowerCase()}</legend>
      <label className="flex items-start gap-2">
        <input type="radio" name="panel-scope" className="mt-1" checked={whole} onChange={() => onChange(true)} />
        <span>
          The whole panel: {panel.length} results of this sample ({panel.map((p) => p.analyte).join(', ')})
        </span>
      </label>
      <label className="flex items-start gap-2">
        <input type="radio" name="panel-scope" className="mt-1" checked={!whole} onChange={() => onChange(false)} />
        <span>Only this result ({result.analyte}); it is split off the panel, the rest stays</span>
      </label>
    </fieldset>
  );
}

function ReassignDialog({
  result,
  panel,
  fromName,
  fromId,
  onClose,
}: {
  result: ChartResult;
  panel: ChartResult[];
  fromName: string;
  fromId: string;
  onClose: (moved: boolean) => void;
}) {
  const [q, setQ] = useState('');
  const debounced = useDebounced(q.trim(), 200);
  const search = useSWR<{ patients: PatientView[] }>(debounced ? `/api/patients?q=${encodeURIComponent(debounced)}&limit=10` : null, fetcher);
  const [chosen, setChosen] = useState<PatientView | null>(null);
  const [reason, setReason] = useState('');
  const [runWillGiveReading, setRunWillGiveReading] = useState(false);
  const [whole, setWhole] = useState(panel.length > 1);
  const [failure, setFailure] = useState<string | null>(null);
  const moving = whole && panel.length > 1 ? panel : [result];
  const submit = async () => {
    if (!chosen) return;
    try {
      if (moving.length > 1 && result.specimenId) {
        // One request, one transaction: every result of the panel moves, or none (409 if the panel changed).
        await send(`/api/specimens/${result.specimenId}/reassign`, 'POST', {
          patientId: chosen.id,
          fromPatientId: fromId,
          readingIds: moving.map((r) => r.id),
          reason,
          runWillGiveReading,
        });
      } else {
        await send(`/api/readings/${result.id}/reassign`, 'POST', { patientId: chosen.id, fromPatientId: fromId, reason, runWillGiveReading });
      }
      onClose(true);
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not move the result.');
    }
  };
  const what = moving.length > 1 ? `${moving.length} results` : 'result';
  return (
    <Modal title={moving.length > 1 ? 'Move panel to another patient' : 'Move result to another patient'} onClose={() => onClose(false)}>
      <PanelScope result={result} panel={panel} whole={whole} onChange={setWhole} verb="Move" />
      <p className="mb-3 text-sm">
        {moving.length > 1 ? (
          <>These {moving.length} results are</>
        ) : (
          <>
            {result.analyte} {result.comparator ?? ''}
            {result.value} {result.unit} is
          </>
        )}{' '}
        on {fromName}’s record. {moving.length > 1 ? 'They' : 'It'} will be taken off with your reason, kept in the history, and put on the
        patient you choose.
      </p>
      <label htmlFor="reassign-search" className="mb-1 block text-sm font-medium">
        Patient
      </label>
      <input id="reassign-search" type="search" className={inputClass} value={q} onChange={(e) => setQ(e.target.value)} autoFocus autoComplete="off" />
      <ul className="mt-2 max-h-48 space-y-1 overflow-auto">
        {search.data?.patients
          .filter((p) => p.id !== fromId)
          .map((p) => (
            <li key={p.id}>
              <button
                type="button"
                onClick={() => setChosen(p)}
                aria-pressed={chosen?.id === p.id}
                className={`w-full rounded border px-2 py-1 text-left text-sm ${chosen?.id === p.id ? 'border-ink-800 bg-ink-100' : 'border-transparent hover:border-ink-300'}`}
              >
                {p.name} <span className="font-mono">{p.recordNumber}</span> <span className="text-xs text-ink-500">{p.species}</span>
              </button>
            </li>
          ))}
      </ul>
      <div className="mt-3">
        <Field id="reassign-reason" label="Reason (required)" error={failure ?? undefined}>
          <input id="reassign-reason" className={inputClass} value={reason} onChange={(e) => setReason(e.target.value)} />
        </Field>
        <label className="mt-2 flex items-start gap-2 text-sm">
          <input type="checkbox" checked={runWillGiveReading} onChange={(e) => setRunWillGiveReading(e.target.checked)} />
          <span>
            The run {moving.length > 1 ? 'these results' : 'this result'} completed will still give a reading (keep its test open on the
            Bench). Leave unticked if that run is over: it is closed as used, with no reading.
          </span>
        </label>
      </div>
      <div className="mt-4 flex flex-wrap justify-end gap-2">
        <button type="button" className={buttonClass.secondary} onClick={() => onClose(false)}>
          Cancel
        </button>
        <button type="button" className={buttonClass.primary} disabled={!chosen || reason.trim().length < 3} onClick={submit}>
          {chosen ? `Move ${what} to ${chosen.name} (${chosen.recordNumber})` : 'Choose a patient'}
        </button>
      </div>
    </Modal>
  );
}

function VoidFromRecordDialog({ result, panel, onClose }: { result: ChartResult; panel: ChartResult[]; onClose: (voided: boolean) => void }) {
  const [reason, setReason] = useState('');
  const [whole, setWhole] = useState(panel.length > 1);
  const [failure, setFailure] = useState<string | null>(null);
  const voiding = whole && panel.length > 1 ? panel : [result];
  const submit = async (e: React.FormEvent) => {
    e.preventDefault();
    try {
      if (voiding.length > 1 && result.specimenId) {
        await send(`/api/specimens/${result.specimenId}/void`, 'POST', { readingIds: voiding.map((r) => r.id), reason, onRecord: true });
      } else {
        await send(`/api/readings/${result.id}/void`, 'POST', { reason, onRecord: true });
      }
      onClose(true);
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not void.');
    }
  };
  return (
    <Modal title={voiding.length > 1 ? 'Void panel on the record' : 'Void result on the record'} onClose={() => onClose(false)}>
      <form onSubmit={submit} className="space-y-3" noValidate>
        <PanelScope result={result} panel={panel} whole={whole} onChange={setWhole} verb="Void" />
        <p className="text-sm">
          {voiding.length > 1 ? `The ${voiding.length} results come` : 'The result comes'} off the record; the history keeps{' '}
          {voiding.length > 1 ? 'them' : 'it'}, with your reason.
        </p>
        <Field id="void-record-reason" label="Reason (required)" error={failure ?? undefined}>
          <input id="void-record-reason" className={inputClass} value={reason} onChange={(e) => setReason(e.target.value)} autoFocus />
        </Field>
        <div className="flex flex-wrap justify-end gap-2">
          <button type="button" className={buttonClass.secondary} onClick={() => onClose(false)}>
            Cancel
          </button>
          <button type="submit" className={buttonClass.danger} disabled={reason.trim().length < 3}>
            {voiding.length > 1 ? `Void ${voiding.length} results` : 'Void result'}
          </button>
        </div>
      </form>
    </Modal>
  );
}
