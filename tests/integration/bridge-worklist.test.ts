// The worklist a bridge may read: open tests on its own instruments, with the tube label and record number
// (what an analyzer's host query answers with, ASTM E1394 §11 request-information record), bearer token only.
import { beforeAll, describe, expect, it } from 'vitest';
import { body, createOtherClinic } from './support';
import { GET as worklistRoute } from '@/app/api/bridge/worklist/route';
import { bridgeWorklistSchema } from '@/lib/validation/readings';
import { seededDatabase } from '../helpers/db';
import { request } from '../helpers/http';

let token: string;
let otherToken: string;

beforeAll(async () => {
  const seeded = await seededDatabase();
  token = seeded.bridgeToken;
  otherToken = (await createOtherClinic(seeded.database.db)).bridgeToken;
});

describe('GET /api/bridge/worklist', () => {
  it("lists the open tests on the bridge's instruments with label and record number", async () => {
    const response = await worklistRoute(request('/api/bridge/worklist', { token }), undefined);
    expect(response.status).toBe(200);
    const { items } = bridgeWorklistSchema.parse(await body(response));
    const chemistry = items.filter((i) => i.instrument === 'chem-analyzer');
    expect(chemistry.map((i) => i.analyte).sort()).toEqual(['ALB', 'ALP', 'ALT', 'BUN', 'CREA', 'GLU', 'TP']);
    expect(chemistry.every((i) => i.sampleId === 'T-7QK4M2' && i.recordNumber === 'FH-1002')).toBe(true);
    expect(items.filter((i) => i.instrument === 'hema-analyzer').every((i) => i.sampleId === null && i.recordNumber === 'FH-1004')).toBe(true);
    // The seeded CRP run for a reader that is not connected has no instrument: not on any bridge's list.
    expect(items.filter((i) => i.instrument === 'crp-reader').map((i) => i.recordNumber)).toEqual(['FH-1003']);
  });

  it("another clinic's bridge sees none of it; no token is 401 (RFC 6750 §3)", async () => {
    const theirs = await body(await worklistRoute(request('/api/bridge/worklist', { token: otherToken }), undefined));
    expect(theirs.items).toEqual([]);
    expect((await worklistRoute(request('/api/bridge/worklist'), undefined)).status).toBe(401);
  });
});
