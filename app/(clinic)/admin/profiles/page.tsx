import type { Metadata } from 'next';
import Link from 'next/link';
import { requirePageActor } from '@/lib/auth/current';
import { listProfiles } from '@/lib/profiles';
import { formatDateTime } from '@/lib/format';
import { PageHeader, buttonClass } from '@/app/components/ui';

export const metadata: Metadata = { title: 'Printout profiles' };

export default async function ProfilesPage() {
  const actor = await requirePageActor('manageClinic');
  const profiles = await listProfiles(actor);
  return (
    <>
      <nav aria-label="Breadcrumb" className="mb-2 text-sm">
        <Link href="/admin" className="text-ink-700 hover:underline">Admin</Link> / Printout profiles
      </nav>
      <PageHeader title="Printout profiles">
        <Link href="/admin/profiles/new" className={buttonClass.primary}>New profile</Link>
      </PageHeader>
      <p className="mb-4 max-w-3xl text-sm text-ink-700">
        A profile teaches the bridge to read an analyzer that prints plain text: where each result slip starts and ends,
        and which lines hold the test, the value, the unit, the sample ID and the time. Paste a captured printout while you
        edit and check every field before saving. Each save is a new version; bridges pick it up within a minute.
      </p>
      {profiles.length === 0 ? (
        <p className="rounded-lg border border-dashed border-ink-300 bg-white/60 px-4 py-8 text-center text-sm text-ink-700">
          No profiles yet.
        </p>
      ) : (
        <ul className="divide-y divide-ink-100 rounded-lg border border-ink-100 bg-white shadow-sm">
          {profiles.map((p) => (
            <li key={p.key} className="flex flex-wrap items-baseline gap-x-4 px-4 py-3">
              <Link href={`/admin/profiles/${p.key}`} className="font-semibold text-ink-800 hover:underline">{p.name}</Link>
              <span className="text-sm text-ink-700">{p.analyzer}</span>
              <span className="text-xs text-ink-500">
                version {p.version} · saved {formatDateTime(p.createdAt)}{p.createdByName && ` by ${p.createdByName}`} · used by{' '}
                {p.instrumentCount} instrument{p.instrumentCount === 1 ? '' : 's'}
              </span>
            </li>
          ))}
        </ul>
      )}
    </>
  );
}
