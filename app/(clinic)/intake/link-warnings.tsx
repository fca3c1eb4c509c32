'use client';
import useSWR from 'swr';
import { fetcher } from '@/lib/client/fetcher';

type Problem = { code: string; name: string; problems: string[] };

/** Tells the bench when an analyzer's link is down or noisy, so results are not silently missing. */
export function LinkWarnings() {
  const { data } = useSWR<{ instruments: Problem[] }>('/api/instruments/health', fetcher, { refreshInterval: 30_000 });
  if (!data?.instruments.length) return null;
  return (
    <div role="alert" className="mb-6 rounded-lg border border-alarm-700/40 bg-alarm-100 px-4 py-3 text-sm text-alarm-700">
      <p className="font-semibold">Check these instrument links: results from them may not be arriving.</p>
      <ul className="mt-1 list-disc pl-5">
        {data.instruments.map((i) => (
          <li key={i.code}>
            <span className="font-medium">{i.name}</span>: {i.problems.join('; ')}
          </li>
        ))}
      </ul>
    </div>
  );
}
