import type { Metadata } from 'next';
import Link from 'next/link';
import { notFound } from 'next/navigation';
import { requirePageActor } from '@/lib/auth/current';
import { getPatient } from '@/lib/patients';
import { ApiError } from '@/lib/http';
import { idParam } from '@/lib/validation/api';
import { formatAge, sexLabel, speciesLabel } from '@/lib/format';
import { ClinicalCaution } from '@/app/components/ui';
import { PatientResults } from './patient-results';
import { ReportPanel } from './report-panel';

export const metadata: Metadata = { title: 'Patient record' };

export default async function PatientPage({ params }: { params: Promise<{ patientId: string }> }) {
  const actor = await requirePageActor('readResults');
  const id = idParam.safeParse((await params).patientId);
  if (!id.success) notFound();
  const patient = await getPatient(actor, id.data).catch((error) => {
    if (error instanceof ApiError && error.status === 404) notFound();
    throw error;
  });

  return (
    <>
      <nav aria-label="Breadcrumb" className="mb-2 text-sm">
        <Link href="/patients" className="text-ink-700 hover:underline">
          Patients
        </Link>{' '}
        / <span className="font-mono">{patient.recordNumber}</span>
      </nav>
      <header className="mb-6 rounded-xl border border-ink-100 bg-white p-5 shadow-sm">
        <div className="flex flex-wrap items-baseline gap-x-4 gap-y-1">
          <h1 className="text-2xl font-semibold tracking-tight">{patient.name}</h1>
          <span className="font-mono text-ink-700">{patient.recordNumber}</span>
        </div>
        <dl className="mt-3 grid grid-cols-2 gap-x-6 gap-y-2 text-sm sm:grid-cols-3 lg:grid-cols-6">
          <Detail label="Species">{speciesLabel[patient.species]}</Detail>
          <Detail label="Breed">{patient.breed ?? '—'}</Detail>
          <Detail label="Sex">{sexLabel[patient.sex]}</Detail>
          <Detail label="Age">
            {formatAge(patient.dateOfBirth)}
            {patient.dateOfBirth && <span className="text-ink-500"> (born {patient.dateOfBirth})</span>}
          </Detail>
          <Detail label="Weight">{patient.weightKg ? `${patient.weightKg} kg` : '—'}</Detail>
          <Detail label="Owner">
            {patient.ownerName ?? '—'}
            {patient.ownerPhone && <span className="block text-ink-500">{patient.ownerPhone}</span>}
          </Detail>
          <Detail label="Attending veterinarian">{patient.attendingVetName ?? '—'}</Detail>
        </dl>
      </header>
      <PatientResults patientId={patient.id} patientName={patient.name} />
      <ReportPanel patientId={patient.id} ownerEmail={patient.ownerEmail ?? null} />
      <div className="mt-8">
        <ClinicalCaution />
      </div>
    </>
  );
}

function Detail({ label, children }: { label: string; children: React.ReactNode }) {
  return (
    <div>
      <dt className="text-xs uppercase tracking-wide text-ink-500">{label}</dt>
      <dd className="font-medium">{children}</dd>
    </div>
  );
}
