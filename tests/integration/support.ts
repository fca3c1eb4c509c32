// Shared pieces for the integration tests that tests/helpers does not provide.
// tests/helpers/{db,http}.ts stay the one place for databases, requests and sign-in.
import { randomBytes } from 'node:crypto';
import { eq, sql } from 'drizzle-orm';
import { vi } from 'vitest';
import { POST as ingestRoute } from '@/app/api/bridge/readings/route';
import type { Db } from '@/db/client';
import { bridges, clinics, instruments, owners, patients, staffUsers } from '@/db/schema';
import { hashPassword } from '@/lib/auth/password';
import { newBridgeToken } from '@/lib/auth/tokens';
import type { LiveEvent } from '@/lib/live/events';
import { request } from '../helpers/http';

// Sessions are sealed with SESSION_SECRET when it is set; without it lib/auth/session.ts would read or
// create a secret file in the developer's data directory. Tests keep their own, per process.
process.env.SESSION_SECRET ||= `test-only-${randomBytes(24).toString('hex')}`;

/** Reads a response body as JSON (the route handlers always answer JSON). */
// eslint-disable-next-line @typescript-eslint/no-explicit-any -- bodies are checked by the assertions, not by types
export async function body<T = any>(response: Response): Promise<T> {
  return (await response.json()) as T;
}

/** One reading record as a bridge spools it. */
export function readingRecord(key: string, payload: Record<string, unknown> = {}, instrument = 'crp-reader') {
  return {
    key,
    instrument,
    receivedAt: new Date().toISOString(),
    payload: { kind: 'reading', analyte: 'cCRP', value: 12.3, unit: 'mg/L', raw: `RESULT 12.3 mg/L (${key})\n`, ...payload },
  };
}

/** Bytes the bridge could not parse, sent so a person can read them. */
export function unparsedRecord(key: string, raw: string, reason = 'no RESULT line', instrument = 'crp-reader') {
  return { key, instrument, receivedAt: new Date().toISOString(), payload: { kind: 'unparsed', raw, reason } };
}

/** Posts a batch through the real bridge route. */
export function ingest(token: string, records: unknown[]) {
  return ingestRoute(request('/api/bridge/readings', { token, body: { records } }), undefined);
}

/** Ingests one reading and returns its id. */
export async function ingestOne(token: string, key: string, payload: Record<string, unknown> = {}): Promise<string> {
  const response = await ingest(token, [readingRecord(key, payload)]);
  if (response.status !== 200) throw new Error(`ingest failed: ${response.status} ${await response.text()}`);
  const { results } = await body<{ results: { id: string; status: string }[] }>(response);
  return results[0].id;
}

export async function staffByEmail(db: Db, email: string) {
  const [user] = await db.select().from(staffUsers).where(eq(staffUsers.email, email));
  if (!user) throw new Error(`no staff member ${email}`);
  return user;
}

export async function patientByRecord(db: Db, clinicId: string, recordNumber: string) {
  const [patient] = await db
    .select()
    .from(patients)
    .where(sql`${patients.clinicId} = ${clinicId} and ${patients.recordNumber} = ${recordNumber}`);
  if (!patient) throw new Error(`no patient ${recordNumber}`);
  return patient;
}

export const OTHER_CLINIC_PASSWORD = 'other-clinic-pass-1';

/**
 * A second, invented clinic inserted directly: one technician, one owner, one patient (also called
 * "Biscuit", to prove searches do not cross clinics), an instrument with the demo code and a bridge.
 */
export async function createOtherClinic(db: Db) {
  const token = newBridgeToken();
  const passwordHash = await hashPassword(OTHER_CLINIC_PASSWORD);
  const [clinic] = await db.insert(clinics).values({ name: 'Tansy Reach Veterinary Clinic', timeZone: 'UTC' }).returning();
  const [tech] = await db
    .insert(staffUsers)
    .values({ clinicId: clinic.id, email: 'tech@tansyreach.example', displayName: 'Odile Prask', role: 'technician', passwordHash })
    .returning();
  const [owner] = await db.insert(owners).values({ clinicId: clinic.id, name: 'Wren Abernathy-Kole' }).returning();
  const [patient] = await db
    .insert(patients)
    .values({ clinicId: clinic.id, recordNumber: 'TR-0001', name: 'Biscuit', species: 'cat', ownerId: owner.id })
    .returning();
  const [bridge] = await db
    .insert(bridges)
    .values({ clinicId: clinic.id, name: 'Front desk PC', tokenHash: token.hash, tokenHint: token.hint })
    .returning();
  const [instrument] = await db
    .insert(instruments)
    .values({ clinicId: clinic.id, code: 'crp-reader', name: 'CRP reader', analytes: ['cCRP'], dialect: 'plain-printout' })
    .returning();
  return { clinic, tech, owner, patient, bridge, instrument, bridgeToken: token.token };
}

/** Waits (generously: a loaded 2-core machine) until an event matching the predicate has arrived. */
export async function waitForEvent(events: LiveEvent[], match: (event: LiveEvent) => boolean): Promise<LiveEvent> {
  return vi.waitFor(
    () => {
      const found = events.find(match);
      if (!found) throw new Error('event not received yet');
      return found;
    },
    { timeout: 15_000, interval: 20 },
  );
}
