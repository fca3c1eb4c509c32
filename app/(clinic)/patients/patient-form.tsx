'use client';
// The New patient and Edit patient form: one zod schema with the route handler, so a field error reads the
// same here and in the API's 400; the server's field errors (a taken record number) land on their field.
import { useRouter } from 'next/navigation';
import { useState } from 'react';
import useSWR from 'swr';
import { useForm, type FieldPath } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { Field, Notice, buttonClass, inputClass } from '@/app/components/ui';
import { useDebounced } from '@/app/components/use-debounced';
import { PATIENT_SEXES, SPECIES } from '@/db/vocabulary';
import { ApiClientError, fetcher, send } from '@/lib/client/fetcher';
import { sexLabel, speciesLabel } from '@/lib/format';
import { RECORD_NUMBER_HINT, patientInputSchema, type PatientFormValues, type PatientInput } from '@/lib/validation/patients';

type OwnerOption = { id: string; name: string; phone: string | null; email: string | null; patientCount: number };

const FIELDS = new Set<string>(Object.keys(patientInputSchema.shape));

export function PatientForm({
  patientId,
  initial,
  ownerShared = 0,
}: {
  /** Set when editing; a new record otherwise. */
  patientId?: string;
  initial?: PatientFormValues;
  /** How many patients share the current owner (editing the contact changes it for all of them). */
  ownerShared?: number;
}) {
  const router = useRouter();
  const editing = Boolean(patientId);
  const [birthMode, setBirthMode] = useState<'date' | 'age'>('date');
  const [ownerMode, setOwnerMode] = useState<'new' | 'existing'>('new');
  const [chosenOwner, setChosenOwner] = useState<OwnerOption | null>(null);
  const [ownerQuery, setOwnerQuery] = useState('');
  const ownerTerm = useDebounced(ownerQuery.trim(), 200);
  const ownerSearch = useSWR<{ owners: OwnerOption[] }>(ownerMode === 'existing' && ownerTerm ? `/api/owners?q=${encodeURIComponent(ownerTerm)}` : null, fetcher);
  const vets = useSWR<{ veterinarians: { id: string; displayName: string }[] }>('/api/veterinarians', fetcher);
  const [failure, setFailure] = useState<string | null>(null);

  const { register, handleSubmit, setError, setValue, formState } = useForm<PatientFormValues, unknown, PatientInput>({
    resolver: zodResolver(patientInputSchema),
    defaultValues: initial ?? { sex: 'unknown', species: undefined },
  });
  const { errors, isSubmitting } = formState;

  const onSubmit = handleSubmit(async (values) => {
    setFailure(null);
    const payload = { ...values };
    if (birthMode === 'date') {
      delete payload.ageYears;
      delete payload.ageMonths;
    } else delete payload.dateOfBirth;
    if (ownerMode === 'existing') {
      if (!chosenOwner) {
        setError('ownerId', { message: 'Choose an owner from the list, or enter a new owner.' }, { shouldFocus: true });
        return;
      }
      payload.ownerId = chosenOwner?.id;
      delete payload.ownerName;
      delete payload.ownerPhone;
      delete payload.ownerEmail;
    } else delete payload.ownerId;
    try {
      const saved = editing
        ? await send<{ patient: { id: string } }>(`/api/patients/${patientId}`, 'PATCH', payload)
        : await send<{ patient: { id: string } }>('/api/patients', 'POST', payload);
      router.push(`/patients/${saved.patient.id}`);
      router.refresh();
    } catch (error) {
      if (error instanceof ApiClientError && error.issues.length) {
        let focused = false;
        for (const issue of error.issues) {
          if (!FIELDS.has(issue.path)) continue;
          setError(issue.path as FieldPath<PatientFormValues>, { message: issue.message }, { shouldFocus: !focused });
          focused = true;
        }
      }
      setFailure(error instanceof Error ? error.message : 'Could not save the patient.');
    }
  });

  const err = (name: keyof PatientFormValues) => errors[name]?.message as string | undefined;
  const aria = (name: keyof PatientFormValues) => ({
    'aria-invalid': Boolean(errors[name]),
    'aria-describedby': errors[name] ? `patient-${name}-error` : undefined,
  });

  return (
    <form onSubmit={onSubmit} noValidate className="max-w-3xl space-y-6" aria-label={editing ? 'Edit patient' : 'New patient'} data-testid="patient-form">
      {failure && <Notice tone="error">{failure}</Notice>}
      <fieldset className="grid gap-4 sm:grid-cols-2">
        <legend className="mb-2 text-base font-semibold">Patient</legend>
        <Field id="patient-recordNumber" label="Record number" hint={RECORD_NUMBER_HINT} error={err('recordNumber')}>
          <input id="patient-recordNumber" className={`${inputClass} font-mono`} autoComplete="off" autoFocus={!editing} {...aria('recordNumber')} {...register('recordNumber')} />
        </Field>
        <Field id="patient-name" label="Name" error={err('name')}>
          <input id="patient-name" className={inputClass} autoComplete="off" {...aria('name')} {...register('name')} />
        </Field>
        <Field id="patient-species" label="Species" error={err('species')}>
          <select id="patient-species" className={inputClass} {...aria('species')} {...register('species')} defaultValue={initial?.species ?? ''}>
            <option value="" disabled>
              Choose…
            </option>
            {SPECIES.map((s) => (
              <option key={s} value={s}>
                {speciesLabel[s]}
              </option>
            ))}
          </select>
        </Field>
        <Field id="patient-breed" label="Breed (optional)" error={err('breed')}>
          <input id="patient-breed" className={inputClass} autoComplete="off" {...aria('breed')} {...register('breed')} />
        </Field>
        <Field id="patient-sex" label="Sex and neuter status" error={err('sex')}>
          <select id="patient-sex" className={inputClass} {...aria('sex')} {...register('sex')}>
            {PATIENT_SEXES.map((s) => (
              <option key={s} value={s}>
                {sexLabel[s][0].toUpperCase() + sexLabel[s].slice(1)}
              </option>
            ))}
          </select>
        </Field>
        <Field id="patient-attendingVetId" label="Attending veterinarian (optional)" error={err('attendingVetId')}>
          <select id="patient-attendingVetId" className={inputClass} {...aria('attendingVetId')} {...register('attendingVetId')}>
            <option value="">None</option>
            {vets.data?.veterinarians.map((v) => (
              <option key={v.id} value={v.id}>
                {v.displayName}
              </option>
            ))}
          </select>
        </Field>
      </fieldset>

      <fieldset className="space-y-3">
        <legend className="mb-2 text-base font-semibold">Age</legend>
        <div className="flex flex-wrap gap-4 text-sm" role="radiogroup" aria-label="How the age is known">
          <label className="flex items-center gap-2">
            <input id="birth-mode-date" type="radio" name="birth-mode" checked={birthMode === 'date'} onChange={() => setBirthMode('date')} /> Date of birth known
          </label>
          <label className="flex items-center gap-2">
            <input id="birth-mode-age" type="radio" name="birth-mode" checked={birthMode === 'age'} onChange={() => setBirthMode('age')} /> Estimated age
          </label>
        </div>
        {birthMode === 'date' ? (
          <div className="sm:w-1/2">
            <Field id="patient-dateOfBirth" label="Date of birth (optional)" error={err('dateOfBirth')}>
              <input id="patient-dateOfBirth" type="date" className={inputClass} {...aria('dateOfBirth')} {...register('dateOfBirth')} />
            </Field>
          </div>
        ) : (
          <div className="grid grid-cols-2 gap-4 sm:w-1/2">
            <Field id="patient-ageYears" label="Years" error={err('ageYears')}>
              <input id="patient-ageYears" inputMode="numeric" className={inputClass} {...aria('ageYears')} {...register('ageYears')} />
            </Field>
            <Field id="patient-ageMonths" label="Months" error={err('ageMonths')}>
              <input id="patient-ageMonths" inputMode="numeric" className={inputClass} {...aria('ageMonths')} {...register('ageMonths')} />
            </Field>
          </div>
        )}
        <p className="text-xs text-ink-500">An estimated age is kept as an estimated date of birth and shown as such.</p>
      </fieldset>

      <fieldset className="grid gap-4 sm:grid-cols-2">
        <legend className="mb-2 text-base font-semibold">Weight</legend>
        <Field id="patient-weightKg" label="Weight in kg (optional)" error={err('weightKg')}>
          <input id="patient-weightKg" inputMode="decimal" className={inputClass} {...aria('weightKg')} {...register('weightKg')} />
        </Field>
        <Field id="patient-weightMeasuredOn" label="Weighed on" hint="Today when left empty." error={err('weightMeasuredOn')}>
          <input id="patient-weightMeasuredOn" type="date" className={inputClass} {...aria('weightMeasuredOn')} {...register('weightMeasuredOn')} />
        </Field>
      </fieldset>

      <fieldset className="space-y-3">
        <legend className="mb-2 text-base font-semibold">Owner</legend>
        <div className="flex flex-wrap gap-4 text-sm" role="radiogroup" aria-label="Owner">
          <label className="flex items-center gap-2">
            <input id="owner-mode-new" type="radio" name="owner-mode" checked={ownerMode === 'new'} onChange={() => setOwnerMode('new')} />
            {editing ? 'This owner (edit contact)' : 'New owner'}
          </label>
          <label className="flex items-center gap-2">
            <input
              id="owner-mode-existing"
              type="radio"
              name="owner-mode"
              checked={ownerMode === 'existing'}
              onChange={() => {
                setOwnerMode('existing');
                setValue('ownerName', '');
              }}
            />
            An owner already on file
          </label>
        </div>
        {ownerMode === 'new' ? (
          <div className="grid gap-4 sm:grid-cols-3">
            <Field id="patient-ownerName" label="Owner’s name" error={err('ownerName')}>
              <input id="patient-ownerName" className={inputClass} autoComplete="off" {...aria('ownerName')} {...register('ownerName')} />
            </Field>
            <Field id="patient-ownerPhone" label="Phone" error={err('ownerPhone')}>
              <input id="patient-ownerPhone" type="tel" className={inputClass} autoComplete="off" {...aria('ownerPhone')} {...register('ownerPhone')} />
            </Field>
            <Field id="patient-ownerEmail" label="E-mail" error={err('ownerEmail')}>
              <input id="patient-ownerEmail" type="email" className={inputClass} autoComplete="off" {...aria('ownerEmail')} {...register('ownerEmail')} />
            </Field>
            {editing && ownerShared > 1 && (
              <p className="text-xs text-signal-600 sm:col-span-3">This owner has {ownerShared} patients: a changed phone or e-mail changes it for all of them.</p>
            )}
          </div>
        ) : (
          <div className="space-y-2">
            <Field id="owner-search" label="Search owners by name, phone or e-mail" error={err('ownerId')}>
              <input id="owner-search" type="search" className={inputClass} value={ownerQuery} onChange={(e) => setOwnerQuery(e.target.value)} autoComplete="off" />
            </Field>
            <ul className="max-h-48 space-y-1 overflow-auto" aria-label="Owners found">
              {ownerSearch.data?.owners.map((o) => (
                <li key={o.id}>
                  <button
                    type="button"
                    aria-pressed={chosenOwner?.id === o.id}
                    onClick={() => setChosenOwner(o)}
                    className={`w-full rounded border px-2 py-1 text-left text-sm ${chosenOwner?.id === o.id ? 'border-ink-800 bg-ink-100' : 'border-ink-100 hover:border-ink-300'}`}
                  >
                    {o.name} <span className="text-xs text-ink-500">{[o.phone, o.email].filter(Boolean).join(' · ')} · {o.patientCount} patient(s)</span>
                  </button>
                </li>
              ))}
              {ownerSearch.data?.owners.length === 0 && <li className="text-sm text-ink-500">No owner on file matches.</li>}
            </ul>
            {chosenOwner && <p className="text-sm">Owner: <span className="font-semibold">{chosenOwner.name}</span></p>}
          </div>
        )}
      </fieldset>

      <div className="flex flex-wrap gap-3">
        <button id="patient-submit" type="submit" className={buttonClass.primary} disabled={isSubmitting}>
          {isSubmitting ? 'Saving…' : editing ? 'Save changes' : 'Register patient'}
        </button>
        <button type="button" className={buttonClass.secondary} onClick={() => router.back()}>
          Cancel
        </button>
      </div>
    </form>
  );
}
