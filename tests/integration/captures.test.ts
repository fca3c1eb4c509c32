// Unparsed captures are kept, then handled by a person: typed in (becoming an unassigned reading marked as
// transcribed) or dismissed with a reason. Nothing is deleted; both leave audit events.
import { and, eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, ingest, unparsedRecord } from './support';
import { GET as listCaptures } from '@/app/api/captures/route';
import { POST as dismiss } from '@/app/api/captures/[captureId]/dismiss/route';
import { POST as transcribe } from '@/app/api/captures/[captureId]/transcribe/route';
import { GET as listReadings } from '@/app/api/readings/route';
import type { Database } from '@/db/client';
import { auditEvents, unparsedCaptures } from '@/db/schema';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

let database: Database;
let token: string;
let tech: string;
beforeAll(async () => {
  ({ database, bridgeToken: token } = await seededDatabase());
  tech = await signIn('tech@fernhollow.example');
});

async function capture(key: string, raw: string) {
  const { results } = await body(await ingest(token, [unparsedRecord(key, raw, 'record cut short')]));
  return results[0].id as string;
}

describe('handling unparsed captures', () => {
  it('typing a result in makes an unassigned, marked reading and closes the capture', async () => {
    const id = await capture('cap-00000001', '---- RESULT ----\nTEST      cCRP\nRESULT    41.5 mg/L\n');
    const response = await transcribe(
      request('/api/captures/x/transcribe', { cookie: tech, body: { analyte: 'cCRP', value: '41.5', unit: 'mg/L', measuredAt: '2026-12-01T10:15:00+00:00' } }),
      params({ captureId: id }),
    );
    expect(response.status).toBe(201);
    const { readingId } = await body(response);
    const waiting = (await body(await listReadings(request('/api/readings?status=unassigned', { cookie: tech }), undefined))).readings;
    const typed = waiting.find((r: { id: string }) => r.id === readingId);
    expect(typed).toMatchObject({ analyte: 'cCRP', value: 41.5, unit: 'mg/L', flags: ['transcribed'] });
    // The printout text travels with the typed result, so anyone can compare the two.
    expect(typed.raw).toContain('RESULT    41.5 mg/L');
    const open = (await body(await listCaptures(request('/api/captures?status=open', { cookie: tech }), undefined))).captures;
    expect(open.map((c: { id: string }) => c.id)).not.toContain(id);
    const events = await database.db.select().from(auditEvents).where(and(eq(auditEvents.entityType, 'unparsed_capture'), eq(auditEvents.entityId, id)));
    expect(events.map((e) => e.action)).toEqual(['capture.received', 'capture.transcribed']);
  });

  it('dismissing needs a reason and keeps the text', async () => {
    const id = await capture('cap-00000002', 'PAPER LOW\n');
    const noReason = await dismiss(request('/api/captures/x/dismiss', { cookie: tech, body: {} }), params({ captureId: id }));
    expect(noReason.status).toBe(400);
    const ok = await dismiss(request('/api/captures/x/dismiss', { cookie: tech, body: { reason: 'paper-feed notice' } }), params({ captureId: id }));
    expect(ok.status).toBe(200);
    const [row] = await database.db.select().from(unparsedCaptures).where(eq(unparsedCaptures.id, id));
    expect(row).toMatchObject({ status: 'dismissed', handlingNote: 'paper-feed notice', raw: 'PAPER LOW\n' });
  });

  it('a capture is handled once: a second attempt is a conflict', async () => {
    const id = await capture('cap-00000003', 'NOISE\n');
    await dismiss(request('/api/captures/x/dismiss', { cookie: tech, body: { reason: 'line noise' } }), params({ captureId: id }));
    const again = await transcribe(request('/api/captures/x/transcribe', { cookie: tech, body: { analyte: 'cCRP', value: 1, unit: 'mg/L' } }), params({ captureId: id }));
    // RFC 9110 §15.5.10: 409 Conflict, the request conflicts with the resource's current state.
    expect(again.status).toBe(409);
  });

  it('refuses a value that is not a number, with the field named', async () => {
    const id = await capture('cap-00000004', 'RESULT ?? mg/L\n');
    const response = await transcribe(request('/api/captures/x/transcribe', { cookie: tech, body: { analyte: 'cCRP', value: 'abc' } }), params({ captureId: id }));
    expect(response.status).toBe(400);
    expect((await body(response)).error.issues.map((i: { path: string }) => i.path)).toContain('value');
  });
});
