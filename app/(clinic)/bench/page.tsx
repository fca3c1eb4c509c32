import type { Metadata } from 'next';
import { requirePageActor } from '@/lib/auth/current';
import { allowed } from '@/lib/auth/roles';
import { ClinicalCaution, PageHeader } from '@/app/components/ui';
import { BenchBoard } from './bench-board';
import { StartTestForm } from './start-test-form';

export const metadata: Metadata = { title: 'Bench' };

export default async function BenchPage() {
  const actor = await requirePageActor('readResults');
  // Mirrors lib/orders.ts: technicians and veterinarians run tests.
  const canRun = allowed(actor.role, 'assignReadings') && actor.role !== 'admin';
  return (
    <>
      <PageHeader title="Bench">
        <p className="max-w-xl text-sm text-ink-700">
          Tests running now, with the time each reading is due. Start a test here when the sample goes into the reader, so
          the anonymous reading it prints can be matched to the right animal.
        </p>
      </PageHeader>
      <div className="grid gap-8 lg:grid-cols-[minmax(0,1fr)_22rem]">
        <BenchBoard canRun={canRun} />
        {canRun && <StartTestForm />}
      </div>
      <div className="mt-8">
        <ClinicalCaution />
      </div>
    </>
  );
}
