'use client';
import { useState } from 'react';
import { useSWRConfig } from 'swr';
import { ApiClientError, send } from '@/lib/client/fetcher';

/** One write from the QC page: sends it, refreshes lab-quality data, keeps the error for the form. */
export function useAction() {
  const { mutate } = useSWRConfig();
  const [error, setError] = useState<string | null>(null);
  const [issues, setIssues] = useState<Record<string, string>>({});
  const [busy, setBusy] = useState(false);
  const run = async <T,>(url: string, method: 'POST' | 'PUT' | 'PATCH', body?: unknown): Promise<T | null> => {
    setBusy(true);
    setError(null);
    setIssues({});
    try {
      const result = await send<T>(url, method, body);
      await mutate((key) => typeof key === 'string' && (key.startsWith('/api/quality') || key.startsWith('/api/admin/instruments')));
      return result;
    } catch (e) {
      setError(e instanceof Error ? e.message : 'Could not save.');
      if (e instanceof ApiClientError) setIssues(Object.fromEntries(e.issues.map((i) => [i.path, i.message])));
      return null;
    } finally {
      setBusy(false);
    }
  };
  return { run, error, issues, busy };
}
