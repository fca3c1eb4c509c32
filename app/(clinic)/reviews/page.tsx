import type { Metadata } from 'next';
import { requirePageActor } from '@/lib/auth/current';
import { ClinicalCaution, PageHeader } from '@/app/components/ui';
import { ReviewBoard } from './review-board';

export const metadata: Metadata = { title: 'Review' };

export default async function ReviewsPage() {
  const actor = await requirePageActor('readResults');
  return (
    <>
      <PageHeader title="Review">
        <p className="max-w-xl text-sm text-ink-700">
          Critical results waiting for acknowledgement, and results no veterinarian has signed off yet. Open a result on its
          chart to read it in context.
        </p>
      </PageHeader>
      <ReviewBoard role={actor.role} />
      <div className="mt-8">
        <ClinicalCaution />
      </div>
    </>
  );
}
