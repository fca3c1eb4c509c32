'use client';
import Link from 'next/link';
import { useDeferredValue, useState } from 'react';
import useSWR from 'swr';
import { Notice, inputClass } from '@/app/components/ui';
import { fetcher } from '@/lib/client/fetcher';
import { formatAge, sexLabel, speciesLabel } from '@/lib/format';
import type { PatientView } from '@/lib/patients';

export function PatientSearch() {
  const [query, setQuery] = useState('');
  const q = useDeferredValue(query.trim());
  const { data, error } = useSWR<{ patients: PatientView[] }>(`/api/patients?q=${encodeURIComponent(q)}&limit=100`, fetcher, {
    keepPreviousData: true,
  });
  return (
    <div className="space-y-4">
      <div className="max-w-md">
        <label htmlFor="patients-q" className="mb-1 block text-sm font-medium">
          Search by name, record number or owner
        </label>
        <input id="patients-q" type="search" className={inputClass} value={query} onChange={(e) => setQuery(e.target.value)} />
      </div>
      {error && <Notice tone="error">Could not load patients: {error.message}</Notice>}
      <div className="overflow-x-auto rounded-lg border border-ink-100 bg-white shadow-sm">
        <table className="min-w-full divide-y divide-ink-100 text-sm">
          <thead className="bg-paper-deep/60 text-left text-xs uppercase tracking-wide text-ink-700">
            <tr>
              <th scope="col" className="px-4 py-2">Record</th>
              <th scope="col" className="px-4 py-2">Name</th>
              <th scope="col" className="px-4 py-2">Species, breed</th>
              <th scope="col" className="px-4 py-2">Sex, age</th>
              <th scope="col" className="px-4 py-2">Owner</th>
              <th scope="col" className="px-4 py-2">Attending</th>
            </tr>
          </thead>
          <tbody className="divide-y divide-ink-100">
            {data?.patients.map((p) => (
              <tr key={p.id} className="hover:bg-paper">
                <td className="px-4 py-2 font-mono">{p.recordNumber}</td>
                <td className="px-4 py-2">
                  <Link href={`/patients/${p.id}`} className="font-semibold text-ink-800 underline-offset-2 hover:underline">
                    {p.name}
                  </Link>
                </td>
                <td className="px-4 py-2">
                  {speciesLabel[p.species]}
                  {p.breed && <span className="text-ink-700">, {p.breed}</span>}
                </td>
                <td className="px-4 py-2">
                  {sexLabel[p.sex]}, {formatAge(p.dateOfBirth)}
                </td>
                <td className="px-4 py-2">{p.ownerName ?? '—'}</td>
                <td className="px-4 py-2">{p.attendingVetName ?? '—'}</td>
              </tr>
            ))}
            {data?.patients.length === 0 && (
              <tr>
                <td colSpan={6} className="px-4 py-6 text-center text-ink-500">
                  No patient matches.
                </td>
              </tr>
            )}
          </tbody>
        </table>
      </div>
    </div>
  );
}
