import type { Metadata } from 'next';
import Link from 'next/link';
import { requirePageActor } from '@/lib/auth/current';
import { PageHeader } from '@/app/components/ui';
import { AuditViewer } from './audit-viewer';

export const metadata: Metadata = { title: 'Audit trail' };

export default async function AuditPage({ searchParams }: { searchParams: Promise<Record<string, string | string[] | undefined>> }) {
  await requirePageActor('manageClinic');
  const sp = await searchParams;
  const one = (k: string) => (typeof sp[k] === 'string' ? (sp[k] as string) : '');
  return (
    <>
      <nav aria-label="Breadcrumb" className="mb-2 text-sm">
        <Link href="/admin" className="text-ink-700 hover:underline">
          Admin
        </Link>{' '}
        / Audit trail
      </nav>
      <PageHeader title="Audit trail" />
      <p className="mb-4 max-w-3xl text-sm text-ink-700">
        Every change in Benchwire, as it was written: who, when, what. The trail is append-only; a correction is a new event, never an edit.
      </p>
      <AuditViewer initial={{ patientId: one('patientId'), actorUserId: one('actorUserId'), action: one('action'), from: one('from'), to: one('to') }} />
    </>
  );
}
