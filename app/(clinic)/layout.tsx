import Link from 'next/link';
import { redirect } from 'next/navigation';
import { requirePageActor } from '@/lib/auth/current';
import { mustChangePassword } from '@/lib/staff';
import { allowed, roleLabel } from '@/lib/auth/roles';
import { BrandMark } from '@/app/components/ui';
import { outboxDir } from '@/lib/mail/outbox';
import { ActorProvider } from './actor';
import { AlertNotifier } from './alert-notifier';
import { BridgeOfflineNotifier } from './bridge-offline-notifier';
import { LiveProvider, LiveStatus } from './live';
import { NavLink } from './nav-link';
import { SignOutButton } from './sign-out-button';

export const dynamic = 'force-dynamic';

export default async function ClinicLayout({ children }: { children: React.ReactNode }) {
  const actor = await requirePageActor();
  if (await mustChangePassword(actor.userId)) redirect('/change-password');
  return (
    <LiveProvider>
      <ActorProvider actor={{ userId: actor.userId, role: actor.role, displayName: actor.displayName, onDuty: actor.onDuty !== false }}>
      <div className="flex min-h-screen flex-col">
        <header className="bg-ink-900 text-white">
          <div className="mx-auto flex max-w-7xl flex-wrap items-center gap-x-6 gap-y-2 px-4 py-3">
            <Link href="/intake" className="flex items-center gap-2 font-semibold tracking-tight">
              <BrandMark />
              Benchwire
            </Link>
            <nav aria-label="Main" className="flex flex-wrap gap-1">
              <NavLink href="/intake">Intake</NavLink>
              <NavLink href="/bench">Bench</NavLink>
              <NavLink href="/patients">Patients</NavLink>
              <NavLink href="/reviews">Review</NavLink>
              <NavLink href="/qc">QC</NavLink>
              {allowed(actor.role, 'manageClinic') && <NavLink href="/admin">Admin</NavLink>}
              {outboxDir() && <NavLink href="/outbox">Outbox (demo)</NavLink>}
            </nav>
            <div className="ml-auto flex flex-wrap items-center gap-x-4 gap-y-1 text-sm">
              <AlertNotifier />
              <LiveStatus />
              <span className="text-ink-100">
                {actor.displayName} <span className="text-ink-300">· {roleLabel[actor.role]}</span>
              </span>
              <SignOutButton />
            </div>
          </div>
        </header>
        <BridgeOfflineNotifier />
        <main className="mx-auto w-full max-w-7xl flex-1 px-4 py-6">{children}</main>
      </div>
      </ActorProvider>
    </LiveProvider>
  );
}
