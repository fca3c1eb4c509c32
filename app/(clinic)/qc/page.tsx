import type { Metadata } from 'next';
import { requirePageActor } from '@/lib/auth/current';
import { ClinicalCaution, PageHeader } from '@/app/components/ui';
import { QcPage } from './qc-page';

export const metadata: Metadata = { title: 'Quality control' };

export default async function QualityControlPage() {
  await requirePageActor('readResults');
  return (
    <>
      <PageHeader title="Quality control">
        <p className="max-w-xl text-sm text-ink-700">
          Control runs, kit lots, the room-temperature log and reference-interval checks, from the readings the bench sends.
        </p>
      </PageHeader>
      <QcPage />
      <div className="mt-8 space-y-2">
        <p className="text-xs leading-relaxed text-ink-500">
          Rule definitions, the 20-sample verification and the sigma formula follow published laboratory-QC practice as cited in the code; a
          rejected run means patient results of that test need checking after the cause is found and QC is accepted again.
        </p>
        <ClinicalCaution />
      </div>
    </>
  );
}
