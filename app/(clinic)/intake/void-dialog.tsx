'use client';
import { useState } from 'react';
import { Modal } from '@/app/components/modal';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { send } from '@/lib/client/fetcher';
import { voidSchema } from '@/lib/validation/api';
import type { IntakeReading } from './intake-board';
import { ReadingSummary } from './reading-summary';

export function VoidDialog({ reading, onClose }: { reading: IntakeReading; onClose: (message?: string) => void }) {
  const [reason, setReason] = useState('');
  const [failure, setFailure] = useState<string | null>(null);
  const [saving, setSaving] = useState(false);

  const submit = async (e: React.FormEvent) => {
    e.preventDefault();
    const parsed = voidSchema.safeParse({ reason });
    if (!parsed.success) return setFailure(parsed.error.issues[0]?.message ?? 'Give a reason.');
    setSaving(true);
    try {
      await send(`/api/readings/${reading.id}/void`, 'POST', parsed.data);
      onClose('Reading voided; it stays in the audit trail with your reason.');
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not void.');
      setSaving(false);
    }
  };

  return (
    <Modal title="Void reading" onClose={() => onClose()}>
      <ReadingSummary reading={reading} />
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
            Void reading
          </button>
        </div>
      </form>
    </Modal>
  );
}
