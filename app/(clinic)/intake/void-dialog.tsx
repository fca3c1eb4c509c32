'use client';
import { useState } from 'react';
import { Modal } from '@/app/components/modal';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { send } from '@/lib/client/fetcher';
import { panelVoidSchema } from '@/lib/validation/api';
import type { IntakeSpecimen } from './intake-board';
import { SpecimenSummary } from './reading-summary';

/** Voids every waiting reading of one sample, with one reason (each reading keeps it in its history). */
export function VoidDialog({ specimen, onClose }: { specimen: IntakeSpecimen; onClose: (message?: string) => void }) {
  const count = specimen.readings.length;
  const [reason, setReason] = useState('');
  const [failure, setFailure] = useState<string | null>(null);
  const [saving, setSaving] = useState(false);

  const submit = async (e: React.FormEvent) => {
    e.preventDefault();
    const parsed = panelVoidSchema.safeParse({ reason, readingIds: specimen.readings.map((r) => r.id) });
    if (!parsed.success) return setFailure(parsed.error.issues[0]?.message ?? 'Give a reason.');
    setSaving(true);
    try {
      await send(`/api/specimens/${specimen.id}/void`, 'POST', parsed.data);
      onClose(`${count === 1 ? 'Reading' : `${count} readings`} voided; the audit trail keeps them with your reason.`);
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not void.');
      setSaving(false);
    }
  };

  return (
    <Modal title={count === 1 ? 'Void reading' : `Void ${count} readings of this sample`} onClose={() => onClose()}>
      <SpecimenSummary specimen={specimen} />
      <form onSubmit={submit} className="space-y-3" noValidate>
        <Field id="void-reason" label="Reason" hint="For example: control run, spoiled sample, duplicate slip." error={failure ?? undefined}>
          <textarea
            id="void-reason"
            rows={2}
            className={inputClass}
            value={reason}
            autoFocus
            aria-invalid={!!failure}
            onChange={(e) => setReason(e.target.value)}
          />
        </Field>
        {failure && failure.length > 60 && <Notice tone="error">{failure}</Notice>}
        <div className="flex justify-end gap-2">
          <button type="button" className={buttonClass.secondary} onClick={() => onClose()}>
            Cancel
          </button>
          <button type="submit" className={buttonClass.danger} disabled={saving}>
            {count === 1 ? 'Void reading' : `Void ${count} readings`}
          </button>
        </div>
      </form>
    </Modal>
  );
}
