import type { Metadata } from 'next';
import Link from 'next/link';
import { requirePageActor } from '@/lib/auth/current';
import { PageHeader } from '@/app/components/ui';
import { PatientForm } from '../patient-form';

export const metadata: Metadata = { title: 'New patient' };

export default async function NewPatientPage() {
  await requirePageActor('managePatients');
  return (
    <>
      <nav aria-label="Breadcrumb" className="mb-2 text-sm">
        <Link href="/patients" className="text-ink-700 hover:underline">
          Patients
        </Link>{' '}
        / New
      </nav>
      <PageHeader title="New patient" />
      <PatientForm />
    </>
  );
}
