import type { Metadata } from 'next';
import { requirePageActor } from '@/lib/auth/current';
import { ClinicalCaution, Notice, PageHeader } from '@/app/components/ui';
import { IntakeBoard } from './intake-board';
import { LinkWarnings } from './link-warnings';

export const metadata: Metadata = { title: 'Intake' };

export default async function IntakePage({ searchParams }: { searchParams: Promise<{ denied?: string }> }) {
  await requirePageActor('readResults');
  const { denied } = await searchParams;
  return (
    <>
      <PageHeader title="Intake">
        <p className="max-w-xl text-sm text-ink-700">
          Readings from the bench that are not on a patient yet, newest first. Check each against the sample tube and the
          request before you assign it.
        </p>
      </PageHeader>
      {denied && (
        <div className="mb-4">
          <Notice tone="error">That page is for administrators only.</Notice>
        </div>
      )}
      <LinkWarnings />
      <IntakeBoard />
      <div className="mt-8">
        <ClinicalCaution />
      </div>
    </>
  );
}
