import Link from 'next/link';
import { requirePageActor } from '@/lib/auth/current';
import { allowed, roleLabel } from '@/lib/auth/roles';
import { BrandMark } from '@/app/components/ui';
import { ActorProvider } from './actor';
import { AlertNotifier } from './alert-notifier';
import { LiveProvider, LiveStatus } from './live';
import { NavLink } from './nav-link';
import { SignOutButton } from './sign-out-button';

export const dynamic = 'force-dynamic';

export default async function ClinicLayout({ children }: { children: React.ReactNode }) {
  const actor = await requirePageActor();
  return (
    <LiveProvider>
      <ActorProvider actor={{ userId: actor.userId, role: actor.role, displayName: actor.displayName }}>
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
              {allowed(actor.role, 'manageClinic') && <NavLink href="/admin">Admin</NavLink>}
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
        <main className="mx-auto w-full max-w-7xl flex-1 px-4 py-6">{children}</main>
      </div>
      </ActorProvider>
    </LiveProvider>
  );
}
