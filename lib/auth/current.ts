import 'server-only';
import { cookies } from 'next/headers';
import { redirect } from 'next/navigation';
import { actorFromSeal, type Actor } from './guards';
import { allowed, type Permission } from './roles';
import { SESSION_COOKIE } from './session';

/** The signed-in staff member for a page or layout, or null. */
export async function currentActor(): Promise<Actor | null> {
  const store = await cookies();
  return actorFromSeal(store.get(SESSION_COOKIE)?.value);
}

/** For pages: sends anonymous visitors to sign-in, and the wrong role back to Intake. */
export async function requirePageActor(permission?: Permission): Promise<Actor> {
  const actor = await currentActor();
  if (!actor) redirect('/sign-in');
  if (permission && !allowed(actor.role, permission)) redirect('/intake?denied=1');
  return actor;
}
