// Logs must not carry patient data: an unhandled database error is logged with its SQL text and error
// code but without the query's parameters (common practice, no source).
import { sql } from 'drizzle-orm';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { openDatabase } from '@/db/client';
import { errorResponse, redactedError } from '@/lib/http';

afterEach(() => vi.restoreAllMocks());

describe('error logs', () => {
  it('a failed query is logged without its parameters; the caller gets a bare 500', async () => {
    const database = await openDatabase();
    const failure = await database.db.execute(sql`select ${'Juniper Moss, 12.3 mg/L'}::int`).then(
      () => null,
      (error: unknown) => error,
    );
    await database.close();
    expect(failure).toBeInstanceOf(Error);
    // Drizzle's own message holds the parameters: that is what must not reach the log.
    expect(String((failure as Error).message)).toContain('Juniper Moss');
    const logged: string[] = [];
    vi.spyOn(console, 'error').mockImplementation((...args: unknown[]) => void logged.push(args.map(String).join(' ')));
    const response = errorResponse(failure);
    expect(response.status).toBe(500);
    expect(logged.join('\n')).not.toContain('Juniper Moss');
    expect(logged.join('\n')).toContain('params: [redacted]');
    expect(redactedError(failure)).toContain('select $1::int');
    expect(await response.text()).not.toContain('Juniper');
  }, 120_000);
});
