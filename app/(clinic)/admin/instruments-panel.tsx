'use client';
import { useState } from 'react';
import useSWR from 'swr';
import { useForm, useWatch } from 'react-hook-form';
import { Modal } from '@/app/components/modal';
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

/** The flat form filled from a saved instrument, for editing. */
function fromInstrument(i: Instrument): FormValues {
  const c = i.connection;
  return {
    code: i.code,
    name: i.name,
    analytes: i.analytes.join(', '),
    dialect: i.dialect,
    serialNumber: i.serialNumber ?? '',
    bridgeId: i.bridgeId ?? '',
    profileId: i.profileId ?? '',
    decimalMark: i.readSettings?.decimalMark ?? 'point',
    receivingApplication: i.readSettings?.receivingApplication ?? '',
    kind: !c ? 'none' : c.kind === 'serial' ? 'serial' : c.mode === 'listen' ? 'tcp-listen' : 'tcp',
    path: c?.kind === 'serial' ? c.path : '/dev/ttyUSB0',
    baudRate: c?.kind === 'serial' ? String(c.baudRate) : '9600',
    dataBits: c?.kind === 'serial' ? String(c.dataBits) : '8',
    parity: c?.kind === 'serial' ? c.parity : 'none',
    stopBits: c?.kind === 'serial' ? String(c.stopBits) : '1',
    host: c?.kind === 'tcp' ? c.host : '',
    port: c?.kind === 'tcp' ? String(c.port) : '',
  };
}

const EMPTY_FORM: Partial<FormValues> = { dialect: 'plain-printout', decimalMark: 'point', kind: 'serial', baudRate: '9600', dataBits: '8', parity: 'none', stopBits: '1', path: '/dev/ttyUSB0' };

export function InstrumentsPanel() {
  const { data, mutate } = useSWR<{ instruments: Instrument[] }>('/api/admin/instruments', fetcher, { refreshInterval: 30_000 });
  const bridges = useSWR<{ bridges: Bridge[] }>('/api/admin/bridges', fetcher);
  const profiles = useSWR<{ profiles: { key: string; name: string; version: number }[] }>('/api/admin/profiles', fetcher);
  const [message, setMessage] = useState<{ tone: 'ok' | 'error'; text: string } | null>(null);
  const [editing, setEditing] = useState<Instrument | null>(null);
  const [service, setService] = useState<Instrument | null>(null);
  const { register, handleSubmit, control, reset, setError, setFocus, formState } = useForm<FormValues>({ defaultValues: EMPTY_FORM });
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
      if (editing) await send(`/api/admin/instruments/${editing.id}`, 'PATCH', parsed.data);
      else await send('/api/admin/instruments', 'POST', parsed.data);
      setMessage({ tone: 'ok', text: `${parsed.data.name} ${editing ? 'saved' : 'added'}.` });
      setEditing(null);
      reset(EMPTY_FORM);
      await mutate();
    } catch (error) {
      setMessage({ tone: 'error', text: error instanceof Error ? error.message : 'Could not save.' });
    }
  });

  const startEdit = (i: Instrument) => {
    setMessage(null);
    setEditing(i);
    reset(fromInstrument(i));
    // After the form shows the instrument: straight to its first editable field.
    setTimeout(() => setFocus('name'), 0);
  };

  const text = (name: keyof FormValues, label: string, extra: React.InputHTMLAttributes<HTMLInputElement> = {}) => (
    <Field id={`instrument-${name}`} label={label} error={errors[name]?.message}>
      <input id={`instrument-${name}`} className={inputClass} aria-invalid={!!errors[name]} {...extra} {...register(name)} />
    </Field>
  );

  return (
    <Panel id="instruments" title="Instruments" intro="Each analyzer on the bench: how the bridge reaches it, how to read what it sends, and which tests it runs.">
      {message && <div className="mb-3"><Notice tone={message.tone}>{message.text}</Notice></div>}
      <div className="relative mb-5 overflow-x-auto">
      <table className="min-w-full divide-y divide-ink-100 text-sm">
        <thead>
          <tr>
            <th scope="col" className={th}>Name</th>
            <th scope="col" className={th}>Code</th>
            <th scope="col" className={th}>Tests</th>
            <th scope="col" className={th}>Reads as</th>
            <th scope="col" className={th}>Connection</th>
            <th scope="col" className={th}>Bridge</th>
            <th scope="col" className={th}>Link</th>
            <th scope="col" className={th}><span className="sr-only">Actions</span></th>
          </tr>
        </thead>
        <tbody className="divide-y divide-ink-100">
          {data?.instruments.map((i) => (
            <tr key={i.id} className={i.active ? undefined : 'text-ink-500'} data-instrument-code={i.code}>
              <td className={td}>{i.name}{!i.active && ' (retired)'}{i.serialNumber && <span className="block text-xs text-ink-500">S/N {i.serialNumber}</span>}</td>
              <td className={`${td} font-mono`}>{i.code}</td>
              <td className={td}>{i.analytes.join(', ')}</td>
              <td className={td}>{DIALECT_LABELS[i.dialect] ?? i.dialect}<span className="block text-xs text-ink-500">{i.readSettings?.decimalMark === 'comma' ? 'decimal comma (12,5)' : 'decimal point (12.5)'}</span></td>
              <td className={`${td} font-mono text-xs`}>{describeConnection(i.connection)}</td>
              <td className={td}>{i.bridgeName ?? '—'}</td>
              <td className={td}>{i.active ? <HealthCell health={i.health} /> : 'retired'}</td>
              <td className={`${td} whitespace-nowrap text-right`}>
                <button type="button" className={`${buttonClass.quiet} mr-3`} onClick={() => startEdit(i)} aria-label={`Edit ${i.name}`}>Edit</button>
                <button type="button" className={buttonClass.quiet} onClick={() => setService(i)} aria-label={`${i.active ? 'Retire' : 'Return to service'} ${i.name}`}>
                  {i.active ? 'Retire…' : 'Return to service…'}
                </button>
              </td>
            </tr>
          ))}
        </tbody>
      </table>
      </div>
      {service && <ServiceDialog instrument={service} onClose={(changed) => { setService(null); if (changed) void mutate(); }} />}
      <form onSubmit={add} noValidate className="space-y-3" aria-label={editing ? `Edit ${editing.name}` : 'Add an instrument'}>
        {editing && <p className="text-sm font-semibold">Editing {editing.name} <span className="font-mono font-normal">({editing.code})</span></p>}
        <div className="grid gap-3 sm:grid-cols-2 lg:grid-cols-4">
          {text('name', 'Name', { placeholder: 'Electrolyte analyzer (bench 3)' })}
          {text('code', editing ? 'Code (sent by the bridge; cannot change)' : 'Code (sent by the bridge)', { placeholder: 'lyte-analyzer', readOnly: Boolean(editing) })}
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
        <div className="flex flex-wrap gap-2">
          <button type="submit" className={buttonClass.primary} disabled={isSubmitting}>{editing ? 'Save instrument' : 'Add instrument'}</button>
          {editing && (
            <button type="button" className={buttonClass.secondary} onClick={() => { setEditing(null); reset(EMPTY_FORM); }}>Cancel editing</button>
          )}
        </div>
      </form>
    </Panel>
  );
}

/** Retire (the bridge stops reading it, its readings keep their history) or return to service, with a reason. */
function ServiceDialog({ instrument, onClose }: { instrument: Instrument; onClose: (changed: boolean) => void }) {
  const [reason, setReason] = useState('');
  const [failure, setFailure] = useState<string | null>(null);
  const retiring = instrument.active;
  const submit = async (e: React.FormEvent) => {
    e.preventDefault();
    setFailure(null);
    try {
      await send(`/api/admin/instruments/${instrument.id}/service`, 'POST', { active: !retiring, reason });
      onClose(true);
    } catch (error) {
      setFailure(error instanceof Error ? error.message : 'Could not save.');
    }
  };
  return (
    <Modal title={`${retiring ? 'Retire' : 'Return to service'}: ${instrument.name}`} onClose={() => onClose(false)}>
      <form onSubmit={submit} noValidate className="space-y-3 text-sm">
        <p>
          {retiring
            ? 'The bridge stops reading it and it is offered for no new test. Its readings stay where they are, with their history; records still in a bridge’s spool are stored under it.'
            : 'The bridge reads it again at its next configuration check, and it can be chosen for new tests.'}
        </p>
        <Field id="instrument-service-reason" label="Reason (required)" error={failure ?? undefined}>
          <input id="instrument-service-reason" className={inputClass} value={reason} onChange={(e) => setReason(e.target.value)} autoFocus />
        </Field>
        <div className="flex justify-end gap-2">
          <button type="button" className={buttonClass.secondary} onClick={() => onClose(false)}>Cancel</button>
          <button type="submit" className={retiring ? buttonClass.danger : buttonClass.primary} disabled={reason.trim().length < 3}>
            {retiring ? 'Retire instrument' : 'Return to service'}
          </button>
        </div>
      </form>
    </Modal>
  );
}
