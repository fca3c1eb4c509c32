'use client';
// Results settings for administrators: the auto-assign switch, units and delta checks per analyte,
// reference intervals with their sources, and the run protocols that set due times.
import { useState } from 'react';
import useSWR from 'swr';
import { Notice, buttonClass, inputClass } from '@/app/components/ui';
import type { AnalyteSetting, ReferenceInterval, RunProtocol } from '@/db/schema';
import { fetcher, send } from '@/lib/client/fetcher';
import { formatDuration, protocolSeconds } from '@/lib/clinical/protocols';
import { speciesLabel } from '@/lib/format';
import { AbnormalCodesForm, type CodedResultSeen } from './abnormal-codes-form';
import { Panel, td, th } from './panel';

interface Config {
  settings: { autoAssignExactId: boolean; criticalEscalationMinutes: number; escalationEmails: string[] };
  analytes: AnalyteSetting[];
  intervals: ReferenceInterval[];
  protocols: RunProtocol[];
  instruments: { id: string; name: string }[];
  codedResults: CodedResultSeen[];
}

const num = (v: string) => (v.trim() === '' ? null : Number(v.replace(',', '.')));
const text = (v: number | null) => (v === null ? '' : String(v));

export function ClinicalPanel() {
  const { data, error, mutate } = useSWR<Config>('/api/admin/clinical', fetcher);
  const [message, setMessage] = useState<{ tone: 'ok' | 'error'; text: string } | null>(null);
  const run = async (what: () => Promise<unknown>, ok: string) => {
    setMessage(null);
    try {
      await what();
      setMessage({ tone: 'ok', text: ok });
      void mutate();
    } catch (e) {
      setMessage({ tone: 'error', text: e instanceof Error ? e.message : 'Could not save.' });
    }
  };
  if (error) return <Notice tone="error">Could not load the results settings: {error.message}</Notice>;
  if (!data) return null;
  const instrumentName = (id: string | null) => (id ? (data.instruments.find((i) => i.id === id)?.name ?? 'an instrument') : 'any instrument');

  return (
    <Panel id="clinical" title="Results and matching" intro="How readings are matched, flagged and shown. Every change is kept in the audit trail.">
      {message && (
        <div className="mb-3">
          <Notice tone={message.tone}>{message.text}</Notice>
        </div>
      )}
      <div className="space-y-6">
        <label className="flex items-start gap-2 text-sm">
          <input
            type="checkbox"
            className="mt-1"
            checked={data.settings.autoAssignExactId}
            onChange={(e) =>
              run(() => send('/api/admin/clinical', 'PATCH', { autoAssignExactId: e.target.checked }), e.target.checked ? 'Auto-assign on exact sample ID is on.' : 'Auto-assign is off.')
            }
          />
          <span>
            <span className="font-medium">Auto-assign on an exact sample ID</span>
            <span className="block text-ink-700">
              When a reading prints a sample ID (or record number) that names exactly one running test, put it on that patient without waiting
              for a person. Everything else stays a suggestion. Off by default.
            </span>
          </span>
        </label>

        {(data.analytes.length === 0 || data.protocols.length === 0 || data.intervals.length === 0) && (
          <button type="button" className={buttonClass.secondary} onClick={() => run(() => send('/api/admin/clinical/defaults', 'POST'), 'Built-in defaults installed.')}>
            Install the built-in defaults (with their sources)
          </button>
        )}

        <div>
          <h3 className="mb-2 font-semibold">Analytes</h3>
          {data.analytes.map((a) => (
            <AnalyteRow key={a.id} analyte={a} onSave={(body) => run(() => send(`/api/admin/clinical/analytes/${encodeURIComponent(a.code)}`, 'PATCH', body), `${a.code} saved.`)} />
          ))}
        </div>

        <AbnormalCodesForm analytes={data.analytes} seen={data.codedResults} onSaved={() => void mutate()} />

        <div>
          <h3 className="mb-2 font-semibold">Reference intervals</h3>
          <div className="relative overflow-x-auto">
            <table className="min-w-full text-sm">
              <thead>
                <tr>
                  <th className={th}>Test / species</th>
                  <th className={th}>Unit</th>
                  <th className={th}>Low</th>
                  <th className={th}>High</th>
                  <th className={th}>Critical low</th>
                  <th className={th}>Critical high</th>
                  <th className={th}>Source</th>
                  <th className={th}></th>
                </tr>
              </thead>
              <tbody>
                {data.intervals.map((i) => (
                  <IntervalRow
                    key={i.id}
                    interval={i}
                    label={`${i.analyte} · ${speciesLabel[i.species]} · ${instrumentName(i.instrumentId)}`}
                    onSave={(body) => run(() => send('/api/admin/clinical/intervals', 'POST', body), 'Interval saved.')}
                  />
                ))}
              </tbody>
            </table>
          </div>
        </div>

        <div>
          <h3 className="mb-2 font-semibold">Run protocols</h3>
          <div className="space-y-2">
            {data.protocols.map((p) => (
              <ProtocolRow
                key={p.id}
                protocol={p}
                instrument={instrumentName(p.instrumentId)}
                onSave={(body) => run(() => send(`/api/admin/clinical/protocols/${p.id}`, 'PATCH', body), `${p.name} saved; running tests keep their due times.`)}
              />
            ))}
          </div>
        </div>
      </div>
    </Panel>
  );
}

function AnalyteRow({ analyte, onSave }: { analyte: AnalyteSetting; onSave: (body: unknown) => void }) {
  const [displayUnit, setDisplayUnit] = useState(analyte.displayUnit);
  const [decimals, setDecimals] = useState(String(analyte.decimals));
  const [deltaAbsolute, setDeltaAbsolute] = useState(text(analyte.deltaAbsolute));
  const [deltaPercent, setDeltaPercent] = useState(text(analyte.deltaPercent));
  const [deltaWindowHours, setDeltaWindowHours] = useState(text(analyte.deltaWindowHours));
  return (
    <form
      className="mb-3 rounded border border-ink-100 p-3 text-sm"
      aria-label={`Settings for ${analyte.code}`}
      onSubmit={(e) => {
        e.preventDefault();
        onSave({
          displayUnit,
          decimals: Number(decimals),
          validatedSpecies: analyte.validatedSpecies,
          deltaAbsolute: num(deltaAbsolute),
          deltaPercent: num(deltaPercent),
          deltaWindowHours: num(deltaWindowHours),
        });
      }}
    >
      <p className="mb-2">
        <span className="font-semibold">{analyte.code}</span> {analyte.name} · kept in {analyte.unit} · validated for{' '}
        {analyte.validatedSpecies.map((s) => speciesLabel[s]).join(', ') || 'any species'}
      </p>
      <div className="grid grid-cols-2 gap-2 sm:grid-cols-5">
        <label>
          <span className="block text-xs text-ink-700">Show in (UCUM)</span>
          <input className={inputClass} value={displayUnit} onChange={(e) => setDisplayUnit(e.target.value)} list={`units-${analyte.id}`} />
          <datalist id={`units-${analyte.id}`}>
            <option value="mg/L" />
            <option value="mg/dL" />
          </datalist>
        </label>
        <label>
          <span className="block text-xs text-ink-700">Decimals</span>
          <input className={inputClass} inputMode="numeric" value={decimals} onChange={(e) => setDecimals(e.target.value)} />
        </label>
        <label>
          <span className="block text-xs text-ink-700">Delta: change over ({analyte.unit})</span>
          <input className={inputClass} inputMode="decimal" value={deltaAbsolute} onChange={(e) => setDeltaAbsolute(e.target.value)} />
        </label>
        <label>
          <span className="block text-xs text-ink-700">and over (%)</span>
          <input className={inputClass} inputMode="decimal" value={deltaPercent} onChange={(e) => setDeltaPercent(e.target.value)} />
        </label>
        <label>
          <span className="block text-xs text-ink-700">within (hours)</span>
          <input className={inputClass} inputMode="decimal" value={deltaWindowHours} onChange={(e) => setDeltaWindowHours(e.target.value)} />
        </label>
      </div>
      {analyte.deltaSource && <p className="mt-1 text-xs text-ink-500">Delta check source: {analyte.deltaSource}</p>}
      <button type="submit" className={`${buttonClass.secondary} mt-2`}>
        Save {analyte.code}
      </button>
    </form>
  );
}

function IntervalRow({ interval, label, onSave }: { interval: ReferenceInterval; label: string; onSave: (body: unknown) => void }) {
  const [v, setV] = useState({
    low: text(interval.low),
    high: text(interval.high),
    criticalLow: text(interval.criticalLow),
    criticalHigh: text(interval.criticalHigh),
    source: interval.source,
  });
  const field = (key: 'low' | 'high' | 'criticalLow' | 'criticalHigh') => (
    <td className={td}>
      <input className={`${inputClass} w-20`} inputMode="decimal" aria-label={`${label} ${key}`} value={v[key]} onChange={(e) => setV({ ...v, [key]: e.target.value })} />
    </td>
  );
  return (
    <tr>
      <td className={td}>{label}</td>
      <td className={td}>{interval.unit}</td>
      {field('low')}
      {field('high')}
      {field('criticalLow')}
      {field('criticalHigh')}
      <td className={td}>
        <textarea className={`${inputClass} min-w-64 text-xs`} rows={3} aria-label={`${label} source`} value={v.source} onChange={(e) => setV({ ...v, source: e.target.value })} />
      </td>
      <td className={td}>
        <button
          type="button"
          className={buttonClass.secondary}
          onClick={() =>
            onSave({
              analyte: interval.analyte,
              species: interval.species,
              instrumentId: interval.instrumentId,
              unit: interval.unit,
              low: num(v.low),
              high: num(v.high),
              criticalLow: num(v.criticalLow),
              criticalHigh: num(v.criticalHigh),
              bands: interval.bands,
              source: v.source,
            })
          }
        >
          Save
        </button>
      </td>
    </tr>
  );
}

function ProtocolRow({ protocol, instrument, onSave }: { protocol: RunProtocol; instrument: string; onSave: (body: unknown) => void }) {
  const [seconds, setSeconds] = useState(protocol.stages.map((st) => String(st.seconds)));
  const [early, setEarly] = useState(String(protocol.earlySeconds));
  const [late, setLate] = useState(String(protocol.lateSeconds));
  const [source, setSource] = useState(protocol.source);
  const stages = protocol.stages.map((st, i) => ({ ...st, seconds: Number(seconds[i]) }));
  return (
    <form
      className="rounded border border-ink-100 p-3 text-sm"
      aria-label={`Run protocol ${protocol.name}`}
      onSubmit={(e) => {
        e.preventDefault();
        onSave({ name: protocol.name, stages, earlySeconds: Number(early), lateSeconds: Number(late), source });
      }}
    >
      <p className="mb-2">
        <span className="font-medium">
          {protocol.analyte} · {protocol.name}
        </span>{' '}
        <span className="text-ink-700">({instrument})</span>
      </p>
      <div className="flex flex-wrap items-end gap-2">
        {protocol.stages.map((st, i) => (
          <label key={st.key}>
            <span className="block text-xs text-ink-700">
              {st.label} (s){st.maxSeconds != null && `, at most ${st.maxSeconds}`}
            </span>
            <input
              className={`${inputClass} w-24`}
              inputMode="numeric"
              value={seconds[i]}
              onChange={(e) => setSeconds(seconds.map((v, j) => (j === i ? e.target.value : v)))}
            />
          </label>
        ))}
        <label>
          <span className="block text-xs text-ink-700">Match from (s early)</span>
          <input className={`${inputClass} w-24`} inputMode="numeric" value={early} onChange={(e) => setEarly(e.target.value)} />
        </label>
        <label>
          <span className="block text-xs text-ink-700">to (s late)</span>
          <input className={`${inputClass} w-24`} inputMode="numeric" value={late} onChange={(e) => setLate(e.target.value)} />
        </label>
      </div>
      <p className="mt-1 text-xs text-ink-700">Due {Number.isFinite(protocolSeconds(stages)) ? formatDuration(protocolSeconds(stages)) : '—'} after the start.</p>
      <label className="mt-2 block">
        <span className="block text-xs text-ink-700">Source of the timings</span>
        <textarea className={`${inputClass} text-xs`} rows={2} value={source} onChange={(e) => setSource(e.target.value)} />
      </label>
      <button type="submit" className={`${buttonClass.secondary} mt-2`}>
        Save protocol
      </button>
    </form>
  );
}
