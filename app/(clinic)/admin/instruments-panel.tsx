'use client';
import { useState } from 'react';
import useSWR from 'swr';
import { useForm, useWatch } from 'react-hook-form';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { fetcher, send } from '@/lib/client/fetcher';
import { timeAgo } from '@/lib/format';
import { DIALECT_LABELS, newInstrumentSchema, type NewInstrumentInput } from '@/lib/validation/api';
import { Panel, td, th } from './panel';

type LinkHealth = { state?: string; detail?: string; warnings?: string[]; at?: string };
type Instrument = NewInstrumentInput & { id: string; bridgeName: string | null; active: boolean; health: LinkHealth | null };

function HealthCell({ health }: { health: LinkHealth | null }) {
  if (!health?.state) return <span className="text-ink-500">no report yet</span>;
  const tone = health.warnings?.length || health.state === 'error' ? 'text-alarm-700' : health.state === 'open' ? 'text-moss-700' : 'text-signal-600';
  const label = { open: 'connected', connecting: 'connecting', closed: 'disconnected', error: 'error' }[health.state] ?? health.state;
  return (
    <span className={tone}>
      {label}
      {health.at && <span className="text-ink-500"> · {timeAgo(health.at)}</span>}
      {health.detail && <span className="block text-xs text-ink-700">{health.detail}</span>}
      {health.warnings?.map((w) => (
        <span key={w} role="alert" className="block text-xs font-medium text-alarm-700">⚠ {w}</span>
      ))}
    </span>
  );
}
type Bridge = { id: string; name: string; revokedAt: string | null };

type FormValues = {
  code: string;
  name: string;
  analytes: string;
  dialect: string;
  serialNumber: string;
  bridgeId: string;
  profileId: string;
  decimalMark: 'point' | 'comma';
  receivingApplication: string;
  kind: 'none' | 'serial' | 'tcp' | 'tcp-listen';
  path: string;
  baudRate: string;
  dataBits: string;
  parity: string;
  stopBits: string;
  host: string;
  port: string;
};

function describeConnection(c: NewInstrumentInput['connection']) {
  if (!c) return '—';
  if (c.kind === 'tcp') return c.mode === 'listen' ? `analyzer dials ${c.host}:${c.port}` : `TCP ${c.host}:${c.port}`;
  return `${c.path} · ${c.baudRate} ${c.dataBits}${c.parity[0].toUpperCase()}${c.stopBits}`;
}

/** Turns the flat form into the API's shape; the same zod schema as the server then checks it. */
function toInput(v: FormValues) {
  return {
    code: v.code,
    name: v.name,
    analytes: v.analytes.split(',').map((a) => a.trim()).filter(Boolean),
    dialect: v.dialect,
    serialNumber: v.serialNumber || undefined,
    bridgeId: v.bridgeId || undefined,
    profileId: v.dialect === 'profile' ? v.profileId || undefined : undefined,
    readSettings: { decimalMark: v.decimalMark, receivingApplication: v.receivingApplication || undefined },
    connection:
      v.kind === 'serial'
        ? { kind: 'serial', path: v.path, baudRate: Number(v.baudRate), dataBits: Number(v.dataBits), parity: v.parity, stopBits: Number(v.stopBits) }
        : v.kind === 'tcp' || v.kind === 'tcp-listen'
          ? { kind: 'tcp', host: v.host, port: Number(v.port), mode: v.kind === 'tcp-listen' ? 'listen' : 'connect' }
          : undefined,
  };
}

export function InstrumentsPanel() {
  const { data, mutate } = useSWR<{ instruments: Instrument[] }>('/api/admin/instruments', fetcher, { refreshInterval: 30_000 });
  const bridges = useSWR<{ bridges: Bridge[] }>('/api/admin/bridges', fetcher);
  const profiles = useSWR<{ profiles: { key: string; name: string; version: number }[] }>('/api/admin/profiles', fetcher);
  const [message, setMessage] = useState<{ tone: 'ok' | 'error'; text: string } | null>(null);
  const { register, handleSubmit, control, reset, setError, formState } = useForm<FormValues>({
    defaultValues: { dialect: 'plain-printout', decimalMark: 'point', kind: 'serial', baudRate: '9600', dataBits: '8', parity: 'none', stopBits: '1', path: '/dev/ttyUSB0' },
  });
  const { errors, isSubmitting } = formState;
  const kind = useWatch({ control, name: 'kind' });
  const dialect = useWatch({ control, name: 'dialect' });

  const add = handleSubmit(async (values) => {
    setMessage(null);
    const parsed = newInstrumentSchema.safeParse(toInput(values));
    if (!parsed.success) {
      for (const issue of parsed.error.issues) {
        const key = (issue.path.at(-1) === 'kind' ? 'kind' : issue.path.at(-1)) as keyof FormValues;
        setError(key in values ? key : 'code', { message: issue.message });
      }
      return;
    }
    try {
      await send('/api/admin/instruments', 'POST', parsed.data);
      setMessage({ tone: 'ok', text: `${parsed.data.name} added.` });
      reset();
      await mutate();
    } catch (error) {
      setMessage({ tone: 'error', text: error instanceof Error ? error.message : 'Could not add.' });
    }
  });

  const text = (name: keyof FormValues, label: string, extra: React.InputHTMLAttributes<HTMLInputElement> = {}) => (
    <Field id={`instrument-${name}`} label={label} error={errors[name]?.message}>
      <input id={`instrument-${name}`} className={inputClass} aria-invalid={!!errors[name]} {...extra} {...register(name)} />
    </Field>
  );

  return (
    <Panel id="instruments" title="Instruments" intro="Each analyzer on the bench: how the bridge reaches it, how to read what it sends, and which tests it runs.">
      {message && <div className="mb-3"><Notice tone={message.tone}>{message.text}</Notice></div>}
      <table className="mb-5 min-w-full divide-y divide-ink-100 text-sm">
        <thead>
          <tr>
            <th scope="col" className={th}>Name</th>
            <th scope="col" className={th}>Code</th>
            <th scope="col" className={th}>Tests</th>
            <th scope="col" className={th}>Reads as</th>
            <th scope="col" className={th}>Connection</th>
            <th scope="col" className={th}>Bridge</th>
            <th scope="col" className={th}>Link</th>
          </tr>
        </thead>
        <tbody className="divide-y divide-ink-100">
          {data?.instruments.map((i) => (
            <tr key={i.id}>
              <td className={td}>{i.name}{i.serialNumber && <span className="block text-xs text-ink-500">S/N {i.serialNumber}</span>}</td>
              <td className={`${td} font-mono`}>{i.code}</td>
              <td className={td}>{i.analytes.join(', ')}</td>
              <td className={td}>{DIALECT_LABELS[i.dialect] ?? i.dialect}</td>
              <td className={`${td} font-mono text-xs`}>{describeConnection(i.connection)}</td>
              <td className={td}>{i.bridgeName ?? '—'}</td>
              <td className={td}><HealthCell health={i.health} /></td>
            </tr>
          ))}
        </tbody>
      </table>
      <form onSubmit={add} noValidate className="space-y-3">
        <div className="grid gap-3 sm:grid-cols-2 lg:grid-cols-4">
          {text('name', 'Name', { placeholder: 'Electrolyte analyzer (bench 3)' })}
          {text('code', 'Code (sent by the bridge)', { placeholder: 'lyte-analyzer' })}
          {text('analytes', 'Tests (comma-separated)', { placeholder: 'Na, K, Cl' })}
          <Field id="instrument-dialect" label="Reads as" error={errors.dialect?.message}>
            <select id="instrument-dialect" className={inputClass} {...register('dialect')}>
              {Object.entries(DIALECT_LABELS).map(([value, label]) => (
                <option key={value} value={value}>{label}</option>
              ))}
            </select>
          </Field>
          {dialect === 'profile' && (
            <Field id="instrument-profileId" label="Printout profile" error={errors.profileId?.message}>
              <select id="instrument-profileId" className={inputClass} {...register('profileId')}>
                <option value="">Choose…</option>
                {profiles.data?.profiles.map((p) => (
                  <option key={p.key} value={p.key}>{p.name} (v{p.version})</option>
                ))}
              </select>
            </Field>
          )}
          <Field id="instrument-decimalMark" label="Numbers it sends" error={errors.decimalMark?.message}>
            <select id="instrument-decimalMark" className={inputClass} {...register('decimalMark')}>
              <option value="point">Decimal point (12.5)</option>
              <option value="comma">Decimal comma (12,5)</option>
            </select>
          </Field>
          {dialect === 'hl7v2' && text('receivingApplication', 'Name in acknowledgments (optional)', { placeholder: 'BENCHWIRE' })}
          {text('serialNumber', 'Serial number (optional)')}
          <Field id="instrument-bridgeId" label="Bridge" error={errors.bridgeId?.message}>
            <select id="instrument-bridgeId" className={inputClass} {...register('bridgeId')}>
              <option value="">Not yet</option>
              {bridges.data?.bridges.filter((b) => !b.revokedAt).map((b) => (
                <option key={b.id} value={b.id}>{b.name}</option>
              ))}
            </select>
          </Field>
          <Field id="instrument-kind" label="Connection" error={errors.kind?.message}>
            <select id="instrument-kind" className={inputClass} {...register('kind')}>
              <option value="serial">Serial port (RS-232 / USB)</option>
              <option value="tcp">Serial-to-network adapter (TCP)</option>
              <option value="tcp-listen">Analyzer connects to the bridge (TCP)</option>
              <option value="none">Set later</option>
            </select>
          </Field>
        </div>
        {kind === 'serial' && (
          <div className="grid gap-3 sm:grid-cols-5">
            {text('path', 'Port', { placeholder: '/dev/ttyUSB0 or COM3' })}
            {text('baudRate', 'Baud rate', { inputMode: 'numeric' })}
            <Field id="instrument-dataBits" label="Data bits">
              <select id="instrument-dataBits" className={inputClass} {...register('dataBits')}>
                {['8', '7', '6', '5'].map((v) => <option key={v}>{v}</option>)}
              </select>
            </Field>
            <Field id="instrument-parity" label="Parity">
              <select id="instrument-parity" className={inputClass} {...register('parity')}>
                {['none', 'even', 'odd', 'mark', 'space'].map((v) => <option key={v}>{v}</option>)}
              </select>
            </Field>
            <Field id="instrument-stopBits" label="Stop bits">
              <select id="instrument-stopBits" className={inputClass} {...register('stopBits')}>
                {['1', '1.5', '2'].map((v) => <option key={v}>{v}</option>)}
              </select>
            </Field>
          </div>
        )}
        {(kind === 'tcp' || kind === 'tcp-listen') && (
          <div className="grid gap-3 sm:grid-cols-4">
            {text('host', kind === 'tcp' ? 'Adapter address' : 'Bridge listens on', { placeholder: kind === 'tcp' ? '192.0.2.15' : '0.0.0.0' })}
            {text('port', 'Port', { inputMode: 'numeric', placeholder: '4001' })}
          </div>
        )}
        <button type="submit" className={buttonClass.primary} disabled={isSubmitting}>Add instrument</button>
      </form>
    </Panel>
  );
}
