import type { Metadata } from 'next';
import { requirePageActor } from '@/lib/auth/current';
import { PageHeader } from '@/app/components/ui';
import { ExportForm } from './export-form';
import { PatientSearch } from './patient-search';

export const metadata: Metadata = { title: 'Patients' };

export default async function PatientsPage() {
  await requirePageActor('readResults');
  return (
    <>
      <PageHeader title="Patients" />
      <PatientSearch />
      <ExportForm />
    </>
  );
}
