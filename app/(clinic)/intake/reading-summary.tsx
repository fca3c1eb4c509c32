import { formatDateTime, formatValue } from '@/lib/format';
import type { IntakeReading } from './intake-board';

export function ReadingSummary({ reading }: { reading: IntakeReading }) {
  return (
    <div className="mb-4 rounded-lg bg-white p-3 text-sm shadow-inner">
      <p>
        <span className="font-medium">{reading.analyte}</span>{' '}
        <span className="font-mono text-base font-semibold">{formatValue(reading)}</span>
      </p>
      <p className="text-ink-700">
        {reading.instrumentName ?? reading.instrumentCode} · measured {formatDateTime(reading.measuredAt)}
        {reading.sampleId && <> · sample <span className="font-mono">{reading.sampleId}</span></>}
      </p>
      <details className="mt-2">
        <summary className="cursor-pointer text-xs text-ink-500">Printout as received</summary>
        <pre className="mt-1 max-h-40 overflow-auto rounded bg-paper p-2 font-mono text-xs">{reading.raw}</pre>
      </details>
    </div>
  );
}
