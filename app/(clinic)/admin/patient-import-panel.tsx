'use client';
// Patients from the practice system: upload its CSV, check the column mapping and each row in a preview
// (nothing is written), then import in one step. Record numbers already in Benchwire are updated or skipped.
import { useState } from 'react';
import { Notice, buttonClass, inputClass } from '@/app/components/ui';
import { upload } from '@/lib/client/fetcher';
import { Panel, td, th } from './panel';

interface Preview {
  headers: string[];
  mapping: Record<string, number | null>;
  fields: { key: string; label: string; required: boolean }[];
  rows: { row: number; action: 'create' | 'update' | 'skip' | 'error'; errors: string[]; existingName: string | null; values: Record<string, unknown> | null }[];
  summary: { rows: number; create: number; update: number; skip: number; error: number };
}

const ACTION_LABEL = { create: 'New patient', update: 'Update', skip: 'Skip (already on file)', error: 'Error' } as const;

const post = <T,>(fields: Record<string, string>, file: File) => upload<T>('/api/admin/patients/import', fields, file);

export function PatientImportPanel() {
  const [file, setFile] = useState<File | null>(null);
  const [duplicates, setDuplicates] = useState<'update' | 'skip'>('skip');
  const [dateFormat, setDateFormat] = useState('YYYY-MM-DD');
  const [mapping, setMapping] = useState<Record<string, number | null> | null>(null);
  const [preview, setPreview] = useState<Preview | null>(null);
  const [skipInvalid, setSkipInvalid] = useState(false);
  const [message, setMessage] = useState<{ tone: 'ok' | 'error'; text: string } | null>(null);
  const [busy, setBusy] = useState(false);

  const fields = (step: 'preview' | 'confirm', m = mapping) => ({
    step,
    duplicates,
    dateFormat,
    skipInvalid: String(skipInvalid),
    ...(m ? { mapping: JSON.stringify(m) } : {}),
  });
  const runPreview = async (m = mapping) => {
    if (!file) return;
    setBusy(true);
    setMessage(null);
    try {
      const result = await post<Preview>(fields('preview', m), file);
      setPreview(result);
      setMapping(result.mapping);
    } catch (e) {
      setPreview(null);
      setMessage({ tone: 'error', text: e instanceof Error ? e.message : 'Could not read the file.' });
    } finally {
      setBusy(false);
    }
  };
  const confirm = async () => {
    if (!file) return;
    setBusy(true);
    setMessage(null);
    try {
      const result = await post<{ created: number; updated: number; skip: number; error: number }>(fields('confirm'), file);
      setMessage({ tone: 'ok', text: `Imported: ${result.created} new, ${result.updated} updated, ${result.skip} skipped${result.error ? `, ${result.error} rows with errors left out` : ''}.` });
      setPreview(null);
      setMapping(null);
    } catch (e) {
      setMessage({ tone: 'error', text: e instanceof Error ? e.message : 'Could not import.' });
    } finally {
      setBusy(false);
    }
  };

  return (
    <Panel id="patient-import" title="Import patients (CSV)" intro="From the practice system’s CSV export (UTF-8, at most 2 MB and 5000 rows). Nothing is written until you confirm.">
      {message && (
        <div className="mb-3 whitespace-pre-line">
          <Notice tone={message.tone}>{message.text}</Notice>
        </div>
      )}
      <form
        className="flex flex-wrap items-end gap-3 text-sm"
        aria-label="Upload patients"
        onSubmit={(e) => {
          e.preventDefault();
          setMapping(null);
          void runPreview(null);
        }}
      >
        <label className="block">
          <span className="font-medium">CSV file</span>
          <input className={inputClass} type="file" accept=".csv,text/csv" required onChange={(e) => setFile(e.target.files?.[0] ?? null)} name="file" />
        </label>
        <label className="block">
          <span className="font-medium">Record number already here</span>
          <select className={inputClass} value={duplicates} onChange={(e) => setDuplicates(e.target.value as 'update' | 'skip')}>
            <option value="skip">Skip that row</option>
            <option value="update">Update the patient</option>
          </select>
        </label>
        <label className="block">
          <span className="font-medium">Dates in the file</span>
          <select className={inputClass} value={dateFormat} onChange={(e) => setDateFormat(e.target.value)}>
            <option>YYYY-MM-DD</option>
            <option>DD/MM/YYYY</option>
            <option>MM/DD/YYYY</option>
          </select>
        </label>
        <button type="submit" className={buttonClass.secondary} disabled={!file || busy}>
          Preview
        </button>
      </form>

      {preview && mapping && (
        <div className="mt-4 space-y-4" data-testid="import-preview">
          <fieldset className="grid gap-2 text-sm sm:grid-cols-2 lg:grid-cols-3">
            <legend className="mb-1 font-semibold">Columns</legend>
            {preview.fields.map((f) => (
              <label key={f.key} className="block">
                <span className="font-medium">
                  {f.label}
                  {f.required && ' *'}
                </span>
                <select
                  className={inputClass}
                  value={mapping[f.key] ?? ''}
                  onChange={(e) => {
                    const next = { ...mapping, [f.key]: e.target.value === '' ? null : Number(e.target.value) };
                    setMapping(next);
                    void runPreview(next);
                  }}
                >
                  <option value="">(not imported)</option>
                  {preview.headers.map((h, i) => (
                    <option key={i} value={i}>
                      {h || `column ${i + 1}`}
                    </option>
                  ))}
                </select>
              </label>
            ))}
          </fieldset>
          <p className="text-sm">
            {preview.summary.rows} rows: {preview.summary.create} new, {preview.summary.update} to update, {preview.summary.skip} to skip,{' '}
            <span className={preview.summary.error ? 'font-semibold text-alarm-700' : ''}>{preview.summary.error} with errors</span>.
          </p>
          <div className="max-h-96 overflow-auto">
            <table className="min-w-full text-sm">
              <thead>
                <tr>
                  <th className={th}>Row</th>
                  <th className={th}>Record</th>
                  <th className={th}>Name</th>
                  <th className={th}>What happens</th>
                </tr>
              </thead>
              <tbody>
                {preview.rows.slice(0, 500).map((r) => (
                  <tr key={r.row} className="border-t border-ink-100" data-import-row={r.row} data-action={r.action}>
                    <td className={td}>{r.row}</td>
                    <td className={`${td} font-mono`}>{String(r.values?.recordNumber ?? '')}</td>
                    <td className={td}>{String(r.values?.name ?? '')}</td>
                    <td className={td}>
                      <span className={r.action === 'error' ? 'font-semibold text-alarm-700' : undefined}>{ACTION_LABEL[r.action]}</span>
                      {r.existingName && <span className="text-ink-700"> ({r.existingName})</span>}
                      {r.errors.map((e) => (
                        <span key={e} className="block text-xs text-alarm-700">
                          {e}
                        </span>
                      ))}
                    </td>
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
          {preview.summary.error > 0 && (
            <label className="flex items-center gap-2 text-sm">
              <input type="checkbox" checked={skipInvalid} onChange={(e) => setSkipInvalid(e.target.checked)} /> Leave the {preview.summary.error} rows with errors out
            </label>
          )}
          <button type="button" className={buttonClass.primary} disabled={busy || (preview.summary.error > 0 && !skipInvalid)} onClick={confirm}>
            Import {preview.summary.create + preview.summary.update} patients
          </button>
        </div>
      )}
    </Panel>
  );
}
