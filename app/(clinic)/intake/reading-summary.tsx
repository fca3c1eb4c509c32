import { formatDateTime, formatValue } from '@/lib/format';
import type { IntakeReading, IntakeSpecimen } from './intake-board';

export function ReadingSummary({ reading }: { reading: IntakeReading }) {
  return <SpecimenSummary specimen={{ instrumentCode: reading.instrumentCode, instrumentName: reading.instrumentName, sampleId: reading.sampleId, patientRef: reading.patientRef, readings: [reading] }} />;
}

/** What is being assigned or voided: every result of the sample, with the printout as received. */
export function SpecimenSummary({ specimen }: { specimen: Pick<IntakeSpecimen, 'instrumentCode' | 'instrumentName' | 'sampleId' | 'patientRef' | 'readings'> }) {
  const first = specimen.readings[0];
  const printouts = [...new Set(specimen.readings.map((r) => r.raw))];
  return (
    <div className="mb-4 rounded-lg bg-white p-3 text-sm shadow-inner">
      <ul className="flex flex-wrap gap-x-4 gap-y-1" data-testid="summary-results">
        {specimen.readings.map((r) => (
          <li key={r.id}>
            <span className="font-medium">{r.analyte}</span>{' '}
            <span className="font-mono text-base font-semibold" title={r.unit ? `UCUM ${r.unit}` : undefined}>
              {formatValue(r)}
            </span>
          </li>
        ))}
      </ul>
      <p className="mt-1 text-ink-700">
        {specimen.instrumentName ?? specimen.instrumentCode} · measured {formatDateTime(first?.measuredAt)}
        {specimen.sampleId && <> · sample <span className="font-mono">{specimen.sampleId}</span></>}
        {specimen.patientRef && <> · patient ID <span className="font-mono">{specimen.patientRef}</span></>}
      </p>
      <details className="mt-2">
        <summary className="cursor-pointer text-xs text-ink-500">Printout as received</summary>
        <pre className="mt-1 max-h-40 overflow-auto whitespace-pre-wrap break-all rounded bg-paper p-2 font-mono text-xs">{printouts.join('\n')}</pre>
      </details>
    </div>
  );
}
