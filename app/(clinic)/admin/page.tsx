import type { Metadata } from 'next';
import { requirePageActor } from '@/lib/auth/current';
import Link from 'next/link';
import { PageHeader, buttonClass } from '@/app/components/ui';
import { AlertsMailPanel } from './alerts-mail-panel';
import { BridgesPanel } from './bridges-panel';
import { ClinicalPanel } from './clinical-panel';
import { InstrumentsPanel } from './instruments-panel';
import { InvitePanel } from './invite-panel';
import { IntegrationsPanel } from './integrations-panel';
import { PatientImportPanel } from './patient-import-panel';
import { StaffPanel } from './staff-panel';

export const metadata: Metadata = { title: 'Admin' };

export default async function AdminPage() {
  const actor = await requirePageActor('manageClinic');
  return (
    <>
      <PageHeader title="Clinic administration">
        <Link href="/admin/profiles" className={buttonClass.secondary}>
          Printout profiles
        </Link>
      </PageHeader>
      <div className="space-y-10">
        <StaffPanel selfId={actor.userId} />
        <InvitePanel />
        <BridgesPanel />
        <InstrumentsPanel />
        <ClinicalPanel />
        <AlertsMailPanel />
        <PatientImportPanel />
        <IntegrationsPanel />
      </div>
    </>
  );
}
