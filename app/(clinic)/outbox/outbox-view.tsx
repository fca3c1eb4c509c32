'use client';
import { useState } from 'react';
import useSWR from 'swr';
import { Notice } from '@/app/components/ui';
import { fetcher } from '@/lib/client/fetcher';
import { formatDateTime } from '@/lib/format';

interface Summary {
  id: string;
  subject: string;
  from: string[];
  to: string[];
  date: string | null;
  attachments: { index: number; filename: string; contentType: string; size: number }[];
}

export function OutboxView() {
  const list = useSWR<{ messages: Summary[] }>('/api/outbox', fetcher, { refreshInterval: 5000 });
  const [selected, setSelected] = useState<string | null>(null);
  const current = useSWR<{ message: Summary & { html: string | null; text: string } }>(selected ? `/api/outbox/${selected}` : null, fetcher);
  if (list.error) return <Notice tone="error">Could not read the Outbox: {list.error.message}</Notice>;
  if (!list.data) return null;
  if (list.data.messages.length === 0) return <p className="text-sm text-ink-500">No messages yet.</p>;
  return (
    <div className="grid gap-4 lg:grid-cols-[minmax(0,22rem)_1fr]">
      <ul className="divide-y divide-ink-100 rounded-lg border border-ink-100 bg-white text-sm shadow-sm" data-testid="outbox-list">
        {list.data.messages.map((m) => (
          <li key={m.id}>
            <button
              type="button"
              className={`block w-full px-3 py-2 text-left hover:bg-ink-100 ${selected === m.id ? 'bg-ink-100' : ''}`}
              onClick={() => setSelected(m.id)}
              aria-current={selected === m.id}
              data-message-id={m.id}
            >
              <span className="block font-medium">{m.subject}</span>
              <span className="block text-xs text-ink-700">
                to {m.to.join(', ')} · {formatDateTime(m.date)}
                {m.attachments.length > 0 && ` · ${m.attachments.length} attachment${m.attachments.length === 1 ? '' : 's'}`}
              </span>
            </button>
          </li>
        ))}
      </ul>
      <div className="min-w-0 rounded-lg border border-ink-100 bg-white p-4 shadow-sm" data-testid="outbox-message">
        {!selected && <p className="text-sm text-ink-500">Choose a message to read it.</p>}
        {current.data && (
          <article className="space-y-3">
            <h2 className="text-lg font-semibold">{current.data.message.subject}</h2>
            <p className="text-xs text-ink-700">
              From {current.data.message.from.join(', ')} to {current.data.message.to.join(', ')} · {formatDateTime(current.data.message.date)}
            </p>
            {current.data.message.attachments.length > 0 && (
              <ul className="flex flex-wrap gap-2 text-sm" data-testid="outbox-attachments">
                {current.data.message.attachments.map((a) => (
                  <li key={a.index}>
                    <a className="rounded border border-ink-300 px-2 py-1 font-mono text-xs hover:bg-ink-100" href={`/api/outbox/${current.data!.message.id}/attachments/${a.index}`} download={a.filename}>
                      {a.filename} ({Math.ceil(a.size / 1024)} KB)
                    </a>
                  </li>
                ))}
              </ul>
            )}
            {current.data.message.html ? (
              // The message's own HTML, sandboxed: no scripts, no same-origin access.
              <iframe title="Message as HTML" sandbox="" srcDoc={current.data.message.html} className="h-96 w-full rounded border border-ink-100" />
            ) : (
              <pre className="whitespace-pre-wrap text-sm">{current.data.message.text}</pre>
            )}
            <details>
              <summary className="cursor-pointer text-sm text-ink-700">Plain-text part</summary>
              <pre className="whitespace-pre-wrap text-sm">{current.data.message.text}</pre>
            </details>
          </article>
        )}
      </div>
    </div>
  );
}
