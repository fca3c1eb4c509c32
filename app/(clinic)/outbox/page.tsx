import type { Metadata } from 'next';
import { notFound } from 'next/navigation';
import { PageHeader } from '@/app/components/ui';
import { requirePageActor } from '@/lib/auth/current';
import { outboxDir } from '@/lib/mail/outbox';
import { OutboxView } from './outbox-view';

export const metadata: Metadata = { title: 'Outbox (demo)' };

export default async function OutboxPage() {
  await requirePageActor('readResults');
  if (!outboxDir()) notFound();
  return (
    <>
      <PageHeader title="Outbox (demo only)">
        <p className="max-w-xl text-sm text-ink-700">
          What the demo’s local mail sink received. Nothing here left this machine; a real installation sends through the
          clinic’s own mail server and has no Outbox.
        </p>
      </PageHeader>
      <OutboxView />
    </>
  );
}
