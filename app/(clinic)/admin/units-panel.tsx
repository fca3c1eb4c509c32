'use client';
// Units the instruments print that UCUM cannot read, as printed, per instrument; an administrator maps
// each to a UCUM unit, and readings that arrive afterwards are read in it (the printed text kept beside it).
import { useState } from 'react';
import useSWR from 'swr';
import { useForm } from 'react-hook-form';
import { Notice, buttonClass, inputClass } from '@/app/components/ui';
import { ApiClientError, fetcher, send } from '@/lib/client/fetcher';
import { timeAgo } from '@/lib/format';
import { unitMappingSchema } from '@/lib/validation/api';
import { Panel, td, th } from './panel';

interface SeenUnit {
  id: string;
  instrumentName: string;
  instrumentCode: string;
  printed: string;
  ucum: string | null;
  readingCount: number;
  lastSeenAt: string;
  mappedAt: string | null;
  mappedByName: string | null;
}

export function UnitsPanel() {
  const { data, error, mutate } = useSWR<{ units: SeenUnit[] }>('/api/admin/units', fetcher);
  return (
    <Panel
      id="units"
      title="Units the instruments print"
      intro="Units that UCUM cannot read, exactly as each instrument printed them. Until one is mapped, its results are shown as printed and are not flagged or converted. A mapping applies to readings that arrive after you save it; earlier ones keep the printed unit. Check the instrument’s manual before mapping."
    >
      {error && <Notice tone="error">Could not load the units: {error.message}</Notice>}
      {data && data.units.length === 0 && <p className="text-sm text-ink-700">No unknown units so far.</p>}
      {data && data.units.length > 0 && (
        <table className="min-w-full divide-y divide-ink-100 text-sm">
          <thead>
            <tr>
              <th scope="col" className={th}>Instrument</th>
              <th scope="col" className={th}>Printed</th>
              <th scope="col" className={th}>Readings</th>
              <th scope="col" className={th}>Read as (UCUM)</th>
            </tr>
          </thead>
          <tbody className="divide-y divide-ink-100">
            {data.units.map((u) => (
              <UnitRow key={u.id} unit={u} onSaved={() => void mutate()} />
            ))}
          </tbody>
        </table>
      )}
    </Panel>
  );
}

function UnitRow({ unit, onSaved }: { unit: SeenUnit; onSaved: () => void }) {
  const [saved, setSaved] = useState<string | null>(null);
  const { register, handleSubmit, setError, formState } = useForm<{ ucum: string }>({ defaultValues: { ucum: unit.ucum ?? '' } });
  const save = (remove: boolean) =>
    handleSubmit(async (values) => {
      setSaved(null);
      const parsed = unitMappingSchema.safeParse({ ucum: remove ? null : values.ucum });
      if (!parsed.success) return setError('ucum', { message: parsed.error.issues[0]?.message });
      try {
        await send(`/api/admin/units/${unit.id}`, 'PUT', parsed.data);
        setSaved(remove ? 'Mapping removed.' : 'Saved: applies to readings from now on.');
        onSaved();
      } catch (e) {
        setError('ucum', { message: e instanceof ApiClientError && e.issues[0] ? e.issues[0].message : e instanceof Error ? e.message : 'Could not save.' });
      }
    });
  const id = `unit-${unit.id}`;
  return (
    <tr data-printed-unit={unit.printed}>
      <td className={td}>{unit.instrumentName} <span className="font-mono text-xs text-ink-500">{unit.instrumentCode}</span></td>
      <td className={`${td} font-mono`}>“{unit.printed}”</td>
      <td className={td}>{unit.readingCount}<span className="block text-xs text-ink-500">last {timeAgo(unit.lastSeenAt)}</span></td>
      <td className={td}>
        <form onSubmit={save(false)} noValidate className="flex flex-wrap items-start gap-2" aria-label={`Map ${unit.printed} from ${unit.instrumentName}`}>
          <label htmlFor={id} className="sr-only">UCUM unit for “{unit.printed}”</label>
          <div>
            <input id={id} className={`${inputClass} w-32 font-mono`} placeholder="mg/dL" aria-invalid={!!formState.errors.ucum} {...register('ucum')} />
            {formState.errors.ucum && <span role="alert" className="block text-xs text-alarm-700">{formState.errors.ucum.message}</span>}
          </div>
          <button type="submit" className={buttonClass.secondary} disabled={formState.isSubmitting}>Save</button>
          {unit.ucum && (
            <button type="button" className={buttonClass.quiet} onClick={save(true)}>Remove mapping</button>
          )}
        </form>
        {unit.ucum && unit.mappedAt && (
          <span className="mt-1 block text-xs text-ink-500">Mapped to {unit.ucum}{unit.mappedByName ? ` by ${unit.mappedByName}` : ''}, {timeAgo(unit.mappedAt)}</span>
        )}
        {saved && <span className="mt-1 block text-xs text-moss-700">{saved}</span>}
      </td>
    </tr>
  );
}
