import type { Metadata } from 'next';
import Link from 'next/link';
import { notFound } from 'next/navigation';
import { requirePageActor } from '@/lib/auth/current';
import { getPatient } from '@/lib/patients';
import { ApiError } from '@/lib/http';
import { idParam } from '@/lib/validation/api';
import { formatAge, sexLabel, speciesLabel } from '@/lib/format';
import { ClinicalCaution, Notice } from '@/app/components/ui';
import { PatientResults } from './patient-results';
import { RecordActions } from './record-actions';
import { TakenOffResults } from './taken-off-results';
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
        {actor.role === 'admin' && (
          <Link href={`/admin/audit?patientId=${patient.id}`} className="ml-4 text-ink-700 underline-offset-2 hover:underline">
            Audit trail of this patient
          </Link>
        )}
      </nav>
      {patient.status === 'merged' && patient.mergedIntoId && (
        <div className="mb-4">
          <Notice tone="info" data-testid="record-status">
            This record was merged into{' '}
            <Link href={`/patients/${patient.mergedIntoId}`} className="font-semibold underline">
              {patient.mergedIntoName} ({patient.mergedIntoRecordNumber})
            </Link>
            : its results are there now.
          </Notice>
        </div>
      )}
      {(patient.status === 'deceased' || patient.status === 'archived') && (
        <div className="mb-4">
          <Notice tone="info" data-testid="record-status">
            {patient.status === 'deceased'
              ? `Deceased${patient.deceasedOn ? ` on ${patient.deceasedOn}` : ''}.`
              : 'Archived.'}{' '}
            The record is closed: it keeps its results but takes no new results or tests.
          </Notice>
        </div>
      )}
      <header className="mb-6 rounded-xl border border-ink-100 bg-white p-5 shadow-sm">
        <div className="flex flex-wrap items-baseline gap-x-4 gap-y-2">
          <h1 className="text-2xl font-semibold tracking-tight">{patient.name}</h1>
          <span className="font-mono text-ink-700">{patient.recordNumber}</span>
          <div className="ml-auto">
            <RecordActions patient={{ id: patient.id, name: patient.name, recordNumber: patient.recordNumber, species: patient.species, status: patient.status }} />
          </div>
        </div>
        <dl className="mt-3 grid grid-cols-2 gap-x-6 gap-y-2 text-sm sm:grid-cols-3 lg:grid-cols-6">
          <Detail label="Species">{speciesLabel[patient.species]}</Detail>
          <Detail label="Breed">{patient.breed ?? '—'}</Detail>
          <Detail label="Sex">{sexLabel[patient.sex]}</Detail>
          <Detail label="Age">
            {patient.dateOfBirthEstimated && 'about '}
            {formatAge(patient.dateOfBirth)}
            {patient.dateOfBirth && (
              <span className="text-ink-500"> ({patient.dateOfBirthEstimated ? 'estimated' : `born ${patient.dateOfBirth}`})</span>
            )}
          </Detail>
          <Detail label="Weight">
            {patient.weightKg ? `${patient.weightKg} kg` : '—'}
            {patient.weightKg && <span className="block text-ink-500">{patient.weightMeasuredOn ? `on ${patient.weightMeasuredOn}` : 'date not recorded'}</span>}
          </Detail>
          <Detail label="Owner">
            {patient.ownerName ?? '—'}
            {patient.ownerPhone && <span className="block text-ink-500">{patient.ownerPhone}</span>}
            {patient.ownerEmail && <span className="block break-all text-ink-500">{patient.ownerEmail}</span>}
          </Detail>
          <Detail label="Attending veterinarian">{patient.attendingVetName ?? '—'}</Detail>
        </dl>
      </header>
      <PatientResults patientId={patient.id} patientName={patient.name} />
      <TakenOffResults patientId={patient.id} />
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
