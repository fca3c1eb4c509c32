// Regression (lib/readings/ingest.ts ingestBatch, inserts into readings / unparsed_captures): PostgreSQL text cannot hold
// U+0000 (PostgreSQL docs, "Character Types": the character with code zero cannot be stored; error 22021
// "invalid byte sequence for encoding UTF8: 0x00"). The zod contract (lib/validation/readings.ts) lets "\u0000"
// through in raw (and analyte, unit, sampleId, …), so the insert fails, the whole batch rolls back and the route
// answers 500. Serial line noise and padding often contain NUL bytes, and they arrive exactly as unparsed
// fragments; the bridge then resends the same batch forever (it is not a 4xx), and the good records in that
// batch never arrive either.
// Expected: never 500. Either store it (e.g. NUL escaped or replaced; the bytes around it are kept) — tested
// here, as captures are "kept, never dropped" — or refuse it in the schema with a 400 naming the path.
import { eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, ingest, readingRecord, unparsedRecord } from './support';
import type { Database } from '@/db/client';
import { readings, unparsedCaptures } from '@/db/schema';
import { seededDatabase } from '../helpers/db';

let database: Database;
let token: string;
beforeAll(async () => {
  ({ database, bridgeToken: token } = await seededDatabase());
});

describe('NUL bytes from an instrument', () => {
  it('an unparsed fragment with a NUL byte is stored, with its batch', async () => {
    const response = await ingest(token, [readingRecord('nul-00000001'), unparsedRecord('nul-00000002', 'ABC\u0000\u0000DEF', 'line noise')]);
    expect(response.status).toBe(200);
    const { results } = await body(response);
    expect(results.map((r: { status: string }) => r.status)).toEqual(['created', 'created']);
    const [capture] = await database.db.select().from(unparsedCaptures).where(eq(unparsedCaptures.id, results[1].id));
    expect(capture.raw.startsWith('ABC')).toBe(true);
    expect(capture.raw.endsWith('DEF')).toBe(true);
  });

  it('a reading whose raw printout holds a NUL byte is stored', async () => {
    const response = await ingest(token, [readingRecord('nul-00000003', { raw: 'RESULT 12.3 mg/L\u0000\r\n' })]);
    expect(response.status).toBe(200);
    const { results } = await body(response);
    const [row] = await database.db.select().from(readings).where(eq(readings.id, results[0].id));
    expect(row.raw.startsWith('RESULT 12.3 mg/L')).toBe(true);
  });
});
