'use client';
// A raw capture file (the bridge's capture log, or bytes another recorder took from the analyzer's line):
// read for the chosen instrument exactly as the bridge reads it, previewed, then added to Intake. What is
// stored already (sent by the bridge, or imported before) is not added again.
import { useState } from 'react';
import useSWR from 'swr';
import Link from 'next/link';
import { Notice, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher, upload } from '@/lib/client/fetcher';
import { formatDateTime, formatValue } from '@/lib/format';
import { Panel, td, th } from './panel';

type Summary = { readingsNew: number; readingsAlreadyStored: number; capturesNew: number; capturesAlreadyStored: number };
type Item =
  | {
      kind: 'reading';
      alreadyStored: boolean;
      analyte: string;
      value: number | null;
      comparator: '<' | '>' | null;
      decimals: number | null;
      code: { system: string | null; code: string; display: string | null } | null;
      text: string | null;
      unit: string | null;
      flags: string[];
      sampleId: string | null;
      patientRef: string | null;
      measuredAt: string | null;
    }
  | { kind: 'unparsed'; alreadyStored: boolean; reason: string; raw: string };
interface Preview {
  instrument: { id: string; code: string; name: string };
  file: { name: string; bytes: number; sha256: string };
  earlierImports: { at: string; by: string; readingsAdded: number; capturesAdded: number }[];
  summary: Summary;
  items: Item[];
  itemsShown: number;
  itemsTotal: number;
}
interface PastImport {
  id: string;
  at: string;
  instrumentName: string;
  fileName: string;
  fileBytes: number;
  importedBy: string;
  readingsAdded: number;
  readingsAlreadyStored: number;
  capturesAdded: number;
  capturesAlreadyStored: number;
}

const plural = (n: number, one: string, many: string) => `${n} ${n === 1 ? one : many}`;

export function CaptureImportPanel() {
  const instruments = useSWR<{ instruments: { id: string; name: string; code: string; active: boolean }[] }>('/api/admin/instruments', fetcher);
  const past = useSWR<{ imports: PastImport[] }>('/api/admin/capture-imports', fetcher);
  const [instrumentId, setInstrumentId] = useState('');
  const [file, setFile] = useState<File | null>(null);
  const [preview, setPreview] = useState<Preview | null>(null);
  const [message, setMessage] = useState<{ tone: 'ok' | 'error'; text: string } | null>(null);
  const [busy, setBusy] = useState(false);

  const run = async (step: 'preview' | 'confirm') => {
    if (!file || !instrumentId) return;
    setBusy(true);
    setMessage(null);
    try {
      if (step === 'preview') {
        setPreview(await upload<Preview>('/api/admin/capture-imports', { step, instrumentId }, file));
      } else {
        const done = await upload<{ summary: Summary }>('/api/admin/capture-imports', { step, instrumentId }, file);
        const s = done.summary;
        setMessage({
          tone: 'ok',
          text: `Added to Intake: ${plural(s.readingsNew, 'reading', 'readings')} and ${plural(s.capturesNew, 'unparsed capture', 'unparsed captures')}; ${s.readingsAlreadyStored + s.capturesAlreadyStored} already stored, not added again.`,
        });
        setPreview(null);
        await past.mutate();
      }
    } catch (e) {
      setPreview(null);
      setMessage({ tone: 'error', text: e instanceof Error ? e.message : 'Could not read the file.' });
    } finally {
      setBusy(false);
    }
  };

  const s = preview?.summary;
  return (
    <Panel
      id="capture-import"
      title="Import a capture file"
      intro="Bytes recorded from an analyzer’s line (the bridge’s capture log, or another recorder), at most 2 MB and 2000 readings. They are read as the bridge reads that instrument; readings and unparsed parts go to Intake for a person to place. Nothing is written until you confirm."
    >
      {message && (
        <div className="mb-3 whitespace-pre-line">
          <Notice tone={message.tone}>
            {message.text}
            {message.tone === 'ok' && (
              <>
                {' '}
                <Link href="/intake" className="underline">
                  Open Intake
                </Link>
              </>
            )}
          </Notice>
        </div>
      )}
      <form
        className="flex flex-wrap items-end gap-3 text-sm"
        aria-label="Upload a capture file"
        onSubmit={(e) => {
          e.preventDefault();
          void run('preview');
        }}
      >
        <label className="block">
          <span className="font-medium">Recorded from</span>
          <select className={inputClass} value={instrumentId} required onChange={(e) => { setInstrumentId(e.target.value); setPreview(null); }}>
            <option value="">Choose the instrument…</option>
            {instruments.data?.instruments
              .filter((i) => i.active)
              .map((i) => (
                <option key={i.id} value={i.id}>
                  {i.name} ({i.code})
                </option>
              ))}
          </select>
        </label>
        <label className="block">
          <span className="font-medium">Capture file</span>
          <input className={inputClass} type="file" required name="file" onChange={(e) => { setFile(e.target.files?.[0] ?? null); setPreview(null); }} />
        </label>
        <button type="submit" className={buttonClass.secondary} disabled={!file || !instrumentId || busy}>
          Preview
        </button>
      </form>

      {preview && s && (
        <div className="mt-4 space-y-3" data-testid="capture-preview">
          <p className="text-sm">
            {preview.file.name} ({preview.file.bytes.toLocaleString()} bytes) read as {preview.instrument.name}:{' '}
            <strong>{plural(s.readingsNew, 'new reading', 'new readings')}</strong>, <strong>{plural(s.capturesNew, 'new unparsed part', 'new unparsed parts')}</strong>;{' '}
            {s.readingsAlreadyStored + s.capturesAlreadyStored} already stored (sent by the bridge or imported before), not added again.
          </p>
          {preview.earlierImports.length > 0 && (
            <Notice tone="info">
              This same file was imported before:{' '}
              {preview.earlierImports.map((e) => `${formatDateTime(e.at)} by ${e.by} (${e.readingsAdded} readings added)`).join('; ')}.
            </Notice>
          )}
          <div className="max-h-96 overflow-auto">
            <table className="min-w-full text-sm" aria-label="What the file holds">
              <thead>
                <tr>
                  <th scope="col" className={th}>Read as</th>
                  <th scope="col" className={th}>Sample / patient ID</th>
                  <th scope="col" className={th}>Measured</th>
                  <th scope="col" className={th}>Stored already?</th>
                </tr>
              </thead>
              <tbody>
                {preview.items.map((item, i) => (
                  <tr key={i} className={`border-t border-ink-100 ${item.alreadyStored ? 'text-ink-500' : ''}`} data-kind={item.kind} data-stored={item.alreadyStored}>
                    {item.kind === 'reading' ? (
                      <>
                        <td className={td}>
                          <span className="font-medium">{item.analyte}</span>{' '}
                          {formatValue({ value: item.value, comparator: item.comparator, unit: item.unit, decimals: item.decimals, valueCode: item.code, valueText: item.text })}
                          {item.flags.length > 0 && <span className="text-ink-700"> [{item.flags.join(', ')}]</span>}
                        </td>
                        <td className={`${td} font-mono`}>{[item.sampleId, item.patientRef].filter(Boolean).join(' / ') || '—'}</td>
                        <td className={td}>{formatDateTime(item.measuredAt)}</td>
                      </>
                    ) : (
                      <>
                        <td className={td} colSpan={3}>
                          <span className="font-medium text-signal-600">Unparsed:</span> {item.reason}
                          <pre className="mt-1 max-h-24 overflow-auto whitespace-pre-wrap break-all rounded bg-ink-100 p-1 font-mono text-xs">{item.raw}</pre>
                        </td>
                      </>
                    )}
                    <td className={td}>{item.alreadyStored ? 'yes, not added' : 'new'}</td>
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
          {preview.itemsShown < preview.itemsTotal && <p className="text-xs text-ink-500">The first {preview.itemsShown} of {preview.itemsTotal} are shown.</p>}
          <button type="button" className={buttonClass.primary} disabled={busy || s.readingsNew + s.capturesNew === 0} onClick={() => void run('confirm')}>
            {s.readingsNew + s.capturesNew === 0 ? 'Nothing new to add' : `Add ${plural(s.readingsNew, 'reading', 'readings')} and ${plural(s.capturesNew, 'unparsed part', 'unparsed parts')} to Intake`}
          </button>
        </div>
      )}

      {(past.data?.imports.length ?? 0) > 0 && (
        <>
          <h3 className="mb-2 mt-6 text-sm font-semibold">Recent imports</h3>
          <table className="min-w-full divide-y divide-ink-100 text-sm" aria-label="Recent capture imports">
            <thead>
              <tr>
                <th scope="col" className={th}>When</th>
                <th scope="col" className={th}>File</th>
                <th scope="col" className={th}>Instrument</th>
                <th scope="col" className={th}>By</th>
                <th scope="col" className={th}>Added</th>
              </tr>
            </thead>
            <tbody className="divide-y divide-ink-100">
              {past.data?.imports.map((p) => (
                <tr key={p.id}>
                  <td className={td}>{formatDateTime(p.at)}</td>
                  <td className={td}>{p.fileName} ({p.fileBytes.toLocaleString()} bytes)</td>
                  <td className={td}>{p.instrumentName}</td>
                  <td className={td}>{p.importedBy}</td>
                  <td className={td}>
                    {plural(p.readingsAdded, 'reading', 'readings')}, {plural(p.capturesAdded, 'unparsed part', 'unparsed parts')} ({p.readingsAlreadyStored + p.capturesAlreadyStored} already stored)
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        </>
      )}
    </Panel>
  );
}
