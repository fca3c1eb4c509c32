'use client';
import { useState } from 'react';
import { buttonClass } from './ui';

/**
 * Copies a secret to the clipboard. The Clipboard API needs a secure context (HTTPS or localhost); on a
 * plain-HTTP clinic address the fallback selects the text so Ctrl+C / long-press still copies it.
 */
export function CopyButton({ text, label = 'Copy' }: { text: string; label?: string }) {
  const [state, setState] = useState<'idle' | 'copied' | 'select'>('idle');
  const copy = async () => {
    try {
      await navigator.clipboard.writeText(text);
      setState('copied');
    } catch {
      setState('select');
    }
  };
  return (
    <span className="inline-flex items-center gap-2">
      <button type="button" className={buttonClass.secondary} onClick={copy}>
        {label}
      </button>
      <span role="status" aria-live="polite" className="text-xs text-ink-700">
        {state === 'copied' ? 'Copied.' : state === 'select' ? 'Copying is blocked here: select the text and copy it.' : ''}
      </span>
    </span>
  );
}
