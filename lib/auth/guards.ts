import 'server-only';
import { and, eq, gt, isNull } from 'drizzle-orm';
import { db } from '@/db/client';
import { bridges, staffSessions, staffUsers, type Bridge, type StaffRole } from '@/db/schema';
import { ApiError } from '@/lib/http';
import { allowed, type Permission } from './roles';
import { SESSION_COOKIE, cookieValue, unsealSession } from './session';
import { bearerToken, hashBridgeToken } from './tokens';

/** The signed-in staff member acting on a request. */
export interface Actor {
  userId: string;
  clinicId: string;
  role: StaffRole;
  displayName: string;
  email: string;
  /** Veterinarians on duty see every open critical result, not only their own patients'. */
  onDuty?: boolean;
  /** Signed in with a temporary password: only changing it, reading the session and signing out are allowed. */
  mustChangePassword?: boolean;
}

/** Resolves a sealed session cookie to an active staff member, re-reading role and status from the database. */
export async function actorFromSeal(seal: string | null | undefined): Promise<Actor | null> {
  const session = await unsealSession(seal);
  if (!session?.sessionId) return null;
  const database = await db();
  const [row] = await database
    .select({ user: staffUsers })
    .from(staffSessions)
    .innerJoin(staffUsers, eq(staffUsers.id, staffSessions.userId))
    .where(
      and(
        eq(staffSessions.id, session.sessionId),
        eq(staffSessions.userId, session.userId),
        eq(staffUsers.clinicId, session.clinicId),
        isNull(staffSessions.endedAt),
        gt(staffSessions.expiresAt, new Date()),
      ),
    );
  const user = row?.user;
  if (!user || !user.active) return null;
  return { userId: user.id, clinicId: user.clinicId, role: user.role, displayName: user.displayName, email: user.email, onDuty: user.onDuty, mustChangePassword: user.mustChangePassword };
}

export function actorFromRequest(request: Request): Promise<Actor | null> {
  return actorFromSeal(cookieValue(request.headers.get('cookie'), SESSION_COOKIE));
}

/**
 * 401 without a valid session, 403 when the role lacks the permission, 403 `password_change_required`
 * while the person still has a temporary password (unless the route is one of the few allowed then:
 * changing the password and reading one's own session; signing out needs no actor).
 */
export async function requireActor(
  request: Request,
  permission?: Permission,
  options: { whilePasswordChangeRequired?: boolean } = {},
): Promise<Actor> {
  const actor = await actorFromRequest(request);
  if (!actor) throw new ApiError(401, 'unauthenticated', 'Sign in to continue.');
  if (actor.mustChangePassword && !options.whilePasswordChangeRequired) {
    throw new ApiError(403, 'password_change_required', 'Choose a new password first (you signed in with a temporary one): POST /api/auth/password.');
  }
  if (permission && !allowed(actor.role, permission)) {
    throw new ApiError(403, 'forbidden', 'Your role does not allow this.');
  }
  return actor;
}

/** For lib functions called with an actor already known: 403 unless the role has the permission. */
export function requirePermission(actor: Actor, permission: Permission, message = 'Your role does not allow this.'): void {
  if (!allowed(actor.role, permission)) throw new ApiError(403, 'forbidden', message);
}

/** A bridge authenticates with its bearer token; revoked tokens are refused. */
export async function requireBridge(request: Request): Promise<Bridge> {
  const token = bearerToken(request);
  // RFC 6750 §3: a 401 for a bearer-protected resource carries a challenge.
  if (!token) {
    throw new ApiError(401, 'unauthenticated', 'A bridge token is required (Authorization: Bearer …).', [], {}, {
      'www-authenticate': 'Bearer realm="benchwire-bridge"',
    });
  }
  const database = await db();
  const [bridge] = await database
    .select()
    .from(bridges)
    .where(and(eq(bridges.tokenHash, hashBridgeToken(token)), isNull(bridges.revokedAt)));
  if (!bridge) {
    throw new ApiError(401, 'invalid_token', 'This bridge token is unknown or has been revoked.', [], {}, {
      'www-authenticate': 'Bearer realm="benchwire-bridge", error="invalid_token"',
    });
  }
  return bridge;
}
