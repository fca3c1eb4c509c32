'use client';
import useSWR from 'swr';
import { Notice } from '@/app/components/ui';
import { fetcher } from '@/lib/client/fetcher';
import { formatDateTime, formatValue } from '@/lib/format';
import type { IntakeReading } from '@/app/(clinic)/intake/intake-board';

export function PatientResults({ patientId }: { patientId: string }) {
  // The live feed revalidates this key whenever a reading is assigned to this patient.
  const { data, error } = useSWR<{ results: IntakeReading[] }>(`/api/patients/${patientId}/results`, fetcher);
  return (
    <section aria-labelledby="results-heading">
      <h2 id="results-heading" className="mb-3 text-lg font-semibold">
        Results
      </h2>
      {error && <Notice tone="error">Could not load results: {error.message}</Notice>}
      {data && data.results.length === 0 && <p className="text-sm text-ink-500">No results on this record yet.</p>}
      {data && data.results.length > 0 && (
        <div className="overflow-x-auto rounded-lg border border-ink-100 bg-white shadow-sm">
          <table className="min-w-full divide-y divide-ink-100 text-sm" data-testid="patient-results">
            <thead className="bg-paper-deep/60 text-left text-xs uppercase tracking-wide text-ink-700">
              <tr>
                <th scope="col" className="px-4 py-2">Measured</th>
                <th scope="col" className="px-4 py-2">Test</th>
                <th scope="col" className="px-4 py-2">Result</th>
                <th scope="col" className="px-4 py-2">Instrument</th>
                <th scope="col" className="px-4 py-2">Sample</th>
              </tr>
            </thead>
            <tbody className="divide-y divide-ink-100">
              {data.results.map((r) => (
                <tr key={r.id} data-reading-id={r.id}>
                  <td className="whitespace-nowrap px-4 py-2">{formatDateTime(r.measuredAt ?? r.receivedAt)}</td>
                  <td className="px-4 py-2 font-medium">{r.analyte}</td>
                  <td className="whitespace-nowrap px-4 py-2 font-mono font-semibold">{formatValue(r)}</td>
                  <td className="px-4 py-2">{r.instrumentName ?? r.instrumentCode}</td>
                  <td className="px-4 py-2 font-mono">{r.sampleId ?? '—'}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
    </section>
  );
}
