import type { Metadata } from 'next';
import Link from 'next/link';
import { notFound, redirect } from 'next/navigation';
import { requirePageActor } from '@/lib/auth/current';
import { ApiError } from '@/lib/http';
import { getPatient } from '@/lib/patients';
import { idParam } from '@/lib/validation/api';
import { PageHeader } from '@/app/components/ui';
import { PatientForm } from '../../patient-form';

export const metadata: Metadata = { title: 'Edit patient' };

export default async function EditPatientPage({ params }: { params: Promise<{ patientId: string }> }) {
  const actor = await requirePageActor('managePatients');
  const id = idParam.safeParse((await params).patientId);
  if (!id.success) notFound();
  const p = await getPatient(actor, id.data).catch((error) => {
    if (error instanceof ApiError && error.status === 404) notFound();
    throw error;
  });
  if (p.status === 'merged' && p.mergedIntoId) redirect(`/patients/${p.mergedIntoId}`);
  const initial = {
    recordNumber: p.recordNumber,
    name: p.name,
    species: p.species,
    breed: p.breed ?? '',
    sex: p.sex,
    dateOfBirth: p.dateOfBirth ?? '',
    weightKg: p.weightKg === null ? '' : String(p.weightKg),
    weightMeasuredOn: p.weightMeasuredOn ?? '',
    ownerName: p.ownerName ?? '',
    ownerPhone: p.ownerPhone ?? '',
    ownerEmail: p.ownerEmail ?? '',
    attendingVetId: p.attendingVetId ?? '',
  };
  return (
    <>
      <nav aria-label="Breadcrumb" className="mb-2 text-sm">
        <Link href="/patients" className="text-ink-700 hover:underline">
          Patients
        </Link>{' '}
        /{' '}
        <Link href={`/patients/${p.id}`} className="font-mono text-ink-700 hover:underline">
          {p.recordNumber}
        </Link>{' '}
        / Edit
      </nav>
      <PageHeader title={`Edit ${p.name}`} />
      <PatientForm patientId={p.id} initial={initial} ownerShared={p.ownerPatientCount} />
    </>
  );
}
