import type { Metadata } from 'next';
import { requirePageActor } from '@/lib/auth/current';
import Link from 'next/link';
import { PageHeader, buttonClass } from '@/app/components/ui';
import { AlertsMailPanel } from './alerts-mail-panel';
import { BridgesPanel } from './bridges-panel';
import { CaptureImportPanel } from './capture-import-panel';
import { ClinicalPanel } from './clinical-panel';
import { InstrumentHealthPanel } from './instrument-health';
import { InstrumentsPanel } from './instruments-panel';
import { MatchingReportPanel } from './matching-report-panel';
import { InvitePanel } from './invite-panel';
import { IntegrationsPanel } from './integrations-panel';
import { PatientImportPanel } from './patient-import-panel';
import { StaffPanel } from './staff-panel';
import { UnitsPanel } from './units-panel';

export const metadata: Metadata = { title: 'Admin' };

export default async function AdminPage() {
  const actor = await requirePageActor('manageClinic');
  return (
    <>
      <PageHeader title="Clinic administration">
        <div className="flex flex-wrap gap-2">
          <Link href="/admin/audit" className={buttonClass.secondary}>
            Audit trail
          </Link>
          <Link href="/admin/profiles" className={buttonClass.secondary}>
            Printout profiles
          </Link>
        </div>
      </PageHeader>
      <div className="space-y-10">
        <StaffPanel selfId={actor.userId} />
        <InvitePanel />
        <BridgesPanel />
        <InstrumentsPanel />
        <InstrumentHealthPanel />
        <UnitsPanel />
        <ClinicalPanel />
        <MatchingReportPanel />
        <AlertsMailPanel />
        <PatientImportPanel />
        <CaptureImportPanel />
        <IntegrationsPanel />
      </div>
    </>
  );
}
