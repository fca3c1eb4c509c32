import type { Metadata } from 'next';
import Link from 'next/link';
import { notFound } from 'next/navigation';
import { requirePageActor } from '@/lib/auth/current';
import { ApiError } from '@/lib/http';
import { getProfile } from '@/lib/profiles';
import { formatDateTime } from '@/lib/format';
import { idParam } from '@/lib/validation/api';
import type { ProfileDefinitionInput } from '@/lib/validation/profile';
import { PageHeader } from '@/app/components/ui';
import { ProfileEditor } from '../profile-editor';

export const metadata: Metadata = { title: 'Printout profile' };

export default async function ProfilePage({ params }: { params: Promise<{ profileKey: string }> }) {
  const actor = await requirePageActor('manageClinic');
  const { profileKey } = await params;
  if (profileKey === 'new') {
    return (
      <>
        <Breadcrumb name="New profile" />
        <PageHeader title="New printout profile" />
        <ProfileEditor />
      </>
    );
  }
  const key = idParam.safeParse(profileKey);
  if (!key.success) notFound();
  const profile = await getProfile(actor, key.data).catch((error) => {
    if (error instanceof ApiError && error.status === 404) notFound();
    throw error;
  });
  return (
    <>
      <Breadcrumb name={profile.name} />
      <PageHeader title={profile.name} />
      <ProfileEditor
        profileKey={profile.key}
        initial={{ name: profile.name, definition: profile.latest.definition as ProfileDefinitionInput }}
        version={profile.latest.version}
      />
      <section aria-labelledby="versions-heading" className="mt-8">
        <h2 id="versions-heading" className="mb-2 text-lg font-semibold">Versions</h2>
        <ol className="space-y-1 text-sm">
          {profile.versions.map((v) => (
            <li key={v.version}>
              <span className="font-mono">v{v.version}</span> · {formatDateTime(v.createdAt)}
              {v.createdByName && ` · ${v.createdByName}`}
            </li>
          ))}
        </ol>
      </section>
    </>
  );
}

function Breadcrumb({ name }: { name: string }) {
  return (
    <nav aria-label="Breadcrumb" className="mb-2 text-sm">
      <Link href="/admin" className="text-ink-700 hover:underline">Admin</Link> /{' '}
      <Link href="/admin/profiles" className="text-ink-700 hover:underline">Printout profiles</Link> / {name}
    </nav>
  );
}
