'use client';
import { useState } from 'react';
import { Modal } from '@/app/components/modal';
import { CopyButton } from '@/app/components/copy-button';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { ApiClientError, send } from '@/lib/client/fetcher';

/** Asks before a change that locks someone out or changes what they may do. */
export function ConfirmDialog({
  title,
  children,
  confirmLabel,
  danger = false,
  onConfirm,
  onClose,
}: {
  title: string;
  children: React.ReactNode;
  confirmLabel: string;
  danger?: boolean;
  onConfirm: () => Promise<void>;
  onClose: () => void;
}) {
  const [busy, setBusy] = useState(false);
  const [failure, setFailure] = useState<string | null>(null);
  return (
    <Modal title={title} onClose={onClose}>
      <div className="space-y-3 text-sm">
        {failure && <Notice tone="error">{failure}</Notice>}
        {children}
        <div className="flex justify-end gap-2">
          <button type="button" className={buttonClass.secondary} onClick={onClose} autoFocus>
            Cancel
          </button>
          <button
            type="button"
            className={danger ? buttonClass.danger : buttonClass.primary}
            disabled={busy}
            onClick={async () => {
              setBusy(true);
              setFailure(null);
              try {
                await onConfirm();
                onClose();
              } catch (error) {
                setFailure(error instanceof Error ? error.message : 'Could not save.');
                setBusy(false);
              }
            }}
          >
            {confirmLabel}
          </button>
        </div>
      </div>
    </Modal>
  );
}

/** 18 characters from an alphabet without look-alikes (no 0/O, 1/l/I), from the browser's CSPRNG. */
function generatePassword() {
  const alphabet = 'ABCDEFGHJKLMNPQRSTUVWXYZabcdefghijkmnopqrstuvwxyz23456789';
  const bytes = crypto.getRandomValues(new Uint8Array(18));
  return Array.from(bytes, (b) => alphabet[b % alphabet.length]).join('');
}

export function TemporaryPasswordDialog({ person, onClose }: { person: { id: string; displayName: string }; onClose: (saved: boolean) => void }) {
  const [password, setPassword] = useState(generatePassword);
  const [error, setError] = useState<string | null>(null);
  const [saved, setSaved] = useState(false);
  const save = async (e: React.FormEvent) => {
    e.preventDefault();
    setError(null);
    try {
      await send(`/api/admin/staff/${person.id}/password`, 'POST', { password });
      setSaved(true);
    } catch (err) {
      setError(err instanceof ApiClientError && err.issues[0] ? err.issues[0].message : err instanceof Error ? err.message : 'Could not save.');
    }
  };
  return (
    <Modal title={`Temporary password for ${person.displayName}`} onClose={() => onClose(saved)}>
      {saved ? (
        <div className="space-y-3 text-sm">
          <Notice tone="ok">Saved. {person.displayName} is signed out everywhere and chooses their own password at the next sign-in.</Notice>
          <p>Give them this password in person or by phone:</p>
          <div className="flex items-center gap-2">
            <code className="flex-1 break-all rounded bg-white p-2 font-mono" data-testid="temporary-password">
              {password}
            </code>
            <CopyButton text={password} label="Copy password" />
          </div>
          <div className="flex justify-end">
            <button type="button" className={buttonClass.primary} onClick={() => onClose(true)} autoFocus>
              Done
            </button>
          </div>
        </div>
      ) : (
        <form onSubmit={save} noValidate className="space-y-3 text-sm">
          <p>Their current password stops working and their sessions end. They must choose a new password when they sign in with this one.</p>
          <Field id="temporary-password" label="Temporary password" hint="At least 12 characters. A random one is filled in." error={error ?? undefined}>
            <div className="flex gap-2">
              <input
                id="temporary-password"
                className={`${inputClass} font-mono`}
                value={password}
                onChange={(e) => setPassword(e.target.value)}
                autoComplete="off"
                aria-invalid={Boolean(error)}
              />
              <button type="button" className={buttonClass.secondary} onClick={() => setPassword(generatePassword())}>
                New
              </button>
            </div>
          </Field>
          <div className="flex justify-end gap-2">
            <button type="button" className={buttonClass.secondary} onClick={() => onClose(false)}>
              Cancel
            </button>
            <button type="submit" className={buttonClass.primary}>
              Set temporary password
            </button>
          </div>
        </form>
      )}
    </Modal>
  );
}
