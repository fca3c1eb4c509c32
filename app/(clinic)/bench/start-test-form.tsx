'use client';
import { useDebounced } from '@/app/components/use-debounced';
import { useState } from 'react';
import useSWR from 'swr';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher, send } from '@/lib/client/fetcher';
import { speciesWarning } from '@/lib/clinical/matching';
import { dueAt, formatDuration, protocolSeconds, type ProtocolStage } from '@/lib/clinical/protocols';
import type { PatientView } from '@/lib/patients';
import { SAMPLE_TYPE_LABELS } from '@/lib/validation/clinical';
import { useActor } from '../actor';
import { useNow } from '../use-now';

interface Options {
  analytes: { code: string; validatedSpecies: string[]; protocols: { id: string; name: string; instrumentId: string | null; stages: ProtocolStage[] }[]; instruments: { id: string; name: string }[] }[];
  orderers: { id: string; displayName: string; role: string }[];
}

/** A tube label to write on the sample: letters and digits that are hard to confuse (no 0/O, 1/I/L). */
export function newTubeLabel(random: (n: number) => number = (n) => crypto.getRandomValues(new Uint32Array(1))[0] % n): string {
  const alphabet = '23456789ABCDEFGHJKMNPQRSTUVWXYZ';
  return `T-${Array.from({ length: 6 }, () => alphabet[random(alphabet.length)]).join('')}`;
}

/** Start a test: patient, test (or the reader's whole panel), reader, sample, who ordered it, and when the run started. */
export function StartTestForm() {
  const actor = useActor();
  const options = useSWR<Options>('/api/orders/options', fetcher);
  const [q, setQ] = useState('');
  const debounced = useDebounced(q.trim(), 200);
  const search = useSWR<{ patients: PatientView[] }>(debounced ? `/api/patients?q=${encodeURIComponent(debounced)}&limit=8` : null, fetcher);
  const [patient, setPatient] = useState<PatientView | null>(null);
  const [analyte, setAnalyte] = useState('');
  const [instrumentId, setInstrumentId] = useState('');
  const [sampleType, setSampleType] = useState('whole_blood');
  const [sampleId, setSampleId] = useState('');
  const [wholePanel, setWholePanel] = useState(false);
  const [orderedBy, setOrderedBy] = useState('');
  const [minutesAgo, setMinutesAgo] = useState('0');
  const [failure, setFailure] = useState<string | null>(null);
  const [done, setDone] = useState<string | null>(null);
  const [saving, setSaving] = useState(false);

  const chosenAnalyte = options.data?.analytes.find((a) => a.code === (analyte || options.data?.analytes[0]?.code));
  const instruments = chosenAnalyte?.instruments ?? [];
  const protocol =
    chosenAnalyte?.protocols.find((p) => p.instrumentId === (instrumentId || null)) ?? chosenAnalyte?.protocols.find((p) => p.instrumentId === null);
  // Then and there: the test is not validated for this patient's species (a warning, never a block).
  const warning = patient && chosenAnalyte ? speciesWarning(chosenAnalyte, patient) : null;
  // Every test of the chosen reader that has a run protocol: one sample, one run, several results.
  const panelCodes = instrumentId ? (options.data?.analytes.filter((a) => a.instruments.some((i) => i.id === instrumentId)).map((a) => a.code) ?? []) : [];
  const codes = wholePanel && panelCodes.length > 1 ? panelCodes : chosenAnalyte ? [chosenAnalyte.code] : [];
  const orderer = orderedBy || (actor.role === 'veterinarian' ? actor.userId : options.data?.orderers[0]?.id) || '';
  const minutes = Number(minutesAgo.replace(',', '.'));
  const now = useNow();
  // Shown before starting; the server computes the stored due time from the same stages.
  const preview = protocol && Number.isFinite(minutes) ? dueAt(new Date(now - minutes * 60_000), protocol.stages) : null;

  const submit = async (e: React.FormEvent) => {
    e.preventDefault();
    setFailure(null);
    if (!patient) return setFailure('Choose the patient.');
    if (!chosenAnalyte) return setFailure('Choose the test.');
    if (!Number.isFinite(minutes) || minutes < 0) return setFailure('Give how many minutes ago the run started (0 for now).');
    setSaving(true);
    const startedAt = minutes > 0 ? new Date(new Date().getTime() - minutes * 60_000).toISOString() : undefined;
    const common = { patientId: patient.id, instrumentId: instrumentId || undefined, sampleType, sampleId: sampleId || undefined, orderedBy: orderer, startedAt };
    try {
      // A whole panel is one request and one transaction: every test starts, or none does.
      if (codes.length > 1) await send('/api/orders/panel', 'POST', { ...common, analytes: codes });
      else await send('/api/orders', 'POST', { ...common, analyte: codes[0] });
      setDone(`${codes.join(', ')} started for ${patient.name} (${patient.recordNumber})${sampleId ? ` on tube ${sampleId}` : ''}.${warning ? ` ${warning}` : ''}`);
      setWholePanel(false);
      setPatient(null);
      setQ('');
      setSampleId('');
      setMinutesAgo('0');
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not start the test.');
    } finally {
      setSaving(false);
    }
  };

  return (
    <section aria-labelledby="start-heading" className="rounded-xl border border-ink-100 bg-white p-4 shadow-sm">
      <h2 id="start-heading" className="mb-3 text-lg font-semibold">
        Start a test
      </h2>
      {options.data && options.data.analytes.length === 0 && (
        <Notice tone="info">No run protocols yet: an administrator can install the defaults in Admin.</Notice>
      )}
      <form onSubmit={submit} className="space-y-3" noValidate aria-label="Start a test">
        <Field id="order-patient" label="Patient">
          {patient ? (
            <div className="flex items-center justify-between rounded-md border border-ink-300 px-3 py-2 text-sm">
              <span>
                <span className="font-semibold">{patient.name}</span> <span className="font-mono">{patient.recordNumber}</span>
              </span>
              <button type="button" className={buttonClass.quiet} onClick={() => setPatient(null)}>
                Change
              </button>
            </div>
          ) : (
            <>
              <input
                id="order-patient"
                type="search"
                autoComplete="off"
                className={inputClass}
                placeholder="Name, record number or owner"
                value={q}
                onChange={(e) => setQ(e.target.value)}
              />
              <ul className="mt-1 space-y-1" aria-label="Patients found">
                {search.data?.patients.map((p) => (
                  <li key={p.id}>
                    <button
                      type="button"
                      data-patient-choice={p.recordNumber}
                      className="w-full rounded border border-transparent px-2 py-1 text-left text-sm hover:border-ink-300"
                      onClick={() => setPatient(p)}
                    >
                      <span className="font-medium">{p.name}</span> <span className="font-mono text-ink-700">{p.recordNumber}</span>{' '}
                      <span className="text-xs text-ink-500">{p.species}</span>
                    </button>
                  </li>
                ))}
              </ul>
            </>
          )}
        </Field>
        {warning && (
          <p role="status" data-testid="species-warning" className="rounded-md border border-alarm-700 bg-alarm-100 px-3 py-2 text-sm font-medium text-alarm-700">
            {warning}
          </p>
        )}
        <div className="grid grid-cols-2 gap-3">
          <Field id="order-analyte" label="Test">
            <select id="order-analyte" className={inputClass} value={chosenAnalyte?.code ?? ''} onChange={(e) => setAnalyte(e.target.value)}>
              {options.data?.analytes.map((a) => (
                <option key={a.code} value={a.code}>
                  {a.code}
                </option>
              ))}
            </select>
          </Field>
          <Field id="order-instrument" label="Reader">
            <select id="order-instrument" className={inputClass} value={instrumentId} onChange={(e) => setInstrumentId(e.target.value)}>
              <option value="">Not chosen</option>
              {instruments.map((i) => (
                <option key={i.id} value={i.id}>
                  {i.name}
                </option>
              ))}
            </select>
          </Field>
          <Field id="order-sample-type" label="Sample">
            <select id="order-sample-type" className={inputClass} value={sampleType} onChange={(e) => setSampleType(e.target.value)}>
              {Object.entries(SAMPLE_TYPE_LABELS).map(([value, label]) => (
                <option key={value} value={value}>
                  {label}
                </option>
              ))}
            </select>
          </Field>
          <Field id="order-sample-id" label="Tube label (optional)">
            <div className="flex gap-2">
              <input id="order-sample-id" className={`${inputClass} min-w-0`} value={sampleId} onChange={(e) => setSampleId(e.target.value)} autoComplete="off" />
              <button type="button" className={buttonClass.secondary} onClick={() => setSampleId(newTubeLabel())} aria-label="Generate a tube label">
                New
              </button>
            </div>
          </Field>
        </div>
        {panelCodes.length > 1 && (
          <label className="flex items-start gap-2 text-sm">
            <input type="checkbox" className="mt-1" checked={wholePanel} onChange={(e) => setWholePanel(e.target.checked)} data-testid="whole-panel" />
            <span>
              Run the reader’s whole panel on this sample ({panelCodes.join(', ')})
            </span>
          </label>
        )}
        <Field id="order-ordered-by" label="Ordered by">
          <select id="order-ordered-by" className={inputClass} value={orderer} onChange={(e) => setOrderedBy(e.target.value)}>
            {options.data?.orderers.map((s) => (
              <option key={s.id} value={s.id}>
                {s.displayName}
              </option>
            ))}
          </select>
        </Field>
        <Field id="order-started" label="Run started (minutes ago)" hint="0 if the sample goes in now; decimals allowed.">
          <input id="order-started" inputMode="decimal" className={inputClass} value={minutesAgo} onChange={(e) => setMinutesAgo(e.target.value)} />
        </Field>
        {protocol && (
          <p className="text-xs text-ink-700" data-testid="protocol-summary">
            {protocol.name}: {protocol.stages.map((s) => `${s.label} ${formatDuration(s.seconds)}`).join(' → ')} (
            {formatDuration(protocolSeconds(protocol.stages))})
            {preview && <> · due {preview.toLocaleTimeString(undefined, { hour: '2-digit', minute: '2-digit', second: '2-digit' })}</>}
          </p>
        )}
        {failure && <Notice tone="error">{failure}</Notice>}
        {done && <Notice tone="ok">{done}</Notice>}
        <button type="submit" className={buttonClass.primary} disabled={saving || !options.data}>
          {codes.length > 1 ? `Start ${codes.length} tests` : 'Start test'}
        </button>
      </form>
    </section>
  );
}
