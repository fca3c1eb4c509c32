import 'server-only';
import { eq } from 'drizzle-orm';
import { db } from '@/db/client';
import { staffSessions } from '@/db/schema';
import { publishSessionEnded } from '@/lib/live/bus';
import { SESSION_TTL_SECONDS, sealSession, sessionCookie, unsealSession } from './session';

/** Opens a server-side session for a staff member and returns the cookie that names it. */
export async function startSession(user: { id: string; clinicId: string }) {
  const database = await db();
  const [session] = await database
    .insert(staffSessions)
    .values({ clinicId: user.clinicId, userId: user.id, expiresAt: new Date(Date.now() + SESSION_TTL_SECONDS * 1000) })
    .returning({ id: staffSessions.id });
  const seal = await sealSession({ userId: user.id, clinicId: user.clinicId, sessionId: session.id, issuedAt: Date.now() });
  return sessionCookie(seal);
}

/** Ends the session a cookie names, so a copy of the cookie is useless afterwards. */
export async function endSession(seal: string | null) {
  const session = await unsealSession(seal);
  if (!session?.sessionId) return;
  const database = await db();
  await database.transaction(async (tx) => {
    await tx.update(staffSessions).set({ endedAt: new Date() }).where(eq(staffSessions.id, session.sessionId!));
    // Its live feed closes too, on whichever instance holds it.
    await publishSessionEnded(tx, { userId: session.userId, sessionId: session.sessionId });
  });
}
