'use client';
import { useEffect, useRef, useState } from 'react';

/** A native modal <dialog>: the browser traps focus, Escape closes it, and focus returns where it was. */
export function Modal({
  title,
  onClose,
  children,
  initialFocus,
}: {
  title: string;
  onClose: () => void;
  children: React.ReactNode;
  /** The id of the element to focus once the dialog is open (else the browser's first focusable one). */
  initialFocus?: string;
}) {
  const ref = useRef<HTMLDialogElement>(null);
  // Who opened it, read while rendering: by the time effects run, a field's autoFocus has moved focus.
  const [opener] = useState(() => (typeof document !== 'undefined' && document.activeElement instanceof HTMLElement ? document.activeElement : null));
  useEffect(() => {
    const dialog = ref.current;
    // React removes the dialog before this cleanup runs, so the browser cannot restore focus itself.
    if (dialog && !dialog.open) {
      dialog.showModal();
      // showModal focuses the first focusable element (the close button); the dialog's first field is where typing belongs.
      const first = initialFocus ? dialog.querySelector<HTMLElement>(`#${CSS.escape(initialFocus)}`) : null;
      (first ?? dialog.querySelector<HTMLElement>('[data-autofocus], .modal-body input:not([type=hidden]), .modal-body textarea'))?.focus();
    }
    return () => {
      dialog?.close();
      if (opener?.isConnected) opener.focus();
    };
    // Focus once, when the dialog opens.
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, [opener]);
  return (
    <dialog
      ref={ref}
      aria-labelledby="modal-title"
      onCancel={(e) => {
        e.preventDefault();
        onClose();
      }}
      className="m-auto w-full max-w-lg rounded-xl bg-paper p-0 shadow-2xl backdrop:bg-ink-950/50"
    >
      <div className="flex items-center justify-between border-b border-ink-100 px-5 py-3">
        <h2 id="modal-title" className="text-base font-semibold text-ink-950">
          {title}
        </h2>
        <button type="button" onClick={onClose} className="rounded px-2 text-xl leading-none text-ink-500 hover:text-ink-900" aria-label="Close">
          ×
        </button>
      </div>
      <div className="modal-body px-5 py-4">{children}</div>
    </dialog>
  );
}
