import type { Metadata } from 'next';
import { requirePageActor } from '@/lib/auth/current';
import Link from 'next/link';
import { allowed } from '@/lib/auth/roles';
import { PageHeader, buttonClass } from '@/app/components/ui';
import { ExportForm } from './export-form';
import { PatientSearch } from './patient-search';

export const metadata: Metadata = { title: 'Patients' };

export default async function PatientsPage() {
  const actor = await requirePageActor('readResults');
  return (
    <>
      <PageHeader title="Patients">
        {allowed(actor.role, 'managePatients') && (
          <Link href="/patients/new" className={buttonClass.primary}>
            New patient
          </Link>
        )}
      </PageHeader>
      <PatientSearch />
      <ExportForm />
    </>
  );
}
