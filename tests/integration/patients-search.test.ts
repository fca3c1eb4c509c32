import { beforeAll, describe, expect, it } from 'vitest';
import { body, createOtherClinic, patientByRecord } from './support';
import { GET as patientRoute } from '@/app/api/patients/[patientId]/route';
import { GET as searchRoute } from '@/app/api/patients/route';
import type { Database } from '@/db/client';
import { patients } from '@/db/schema';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';

let database: Database;
let clinicId: string;
let cookie: string;
let other: Awaited<ReturnType<typeof createOtherClinic>>;

beforeAll(async () => {
  ({ database, clinicId } = await seededDatabase());
  other = await createOtherClinic(database.db);
  await database.db.insert(patients).values([
    // Sorts before "Bramble" by name, and its record number contains FH-1010: ranking must still put FH-1010 first.
    { clinicId, recordNumber: 'FH-10100', name: 'Aardvark', species: 'other' },
    { clinicId, recordNumber: 'FH-2001', name: 'Half_Pint 50%', species: 'dog' },
    { clinicId, recordNumber: 'FH-2002', name: 'Halfpint 500', species: 'dog' },
    { clinicId, recordNumber: 'FH-2003', name: 'Ghost', species: 'cat', active: false },
  ]);
  cookie = await signIn('vet@fernhollow.example');
});

type Found = { id: string; name: string; recordNumber: string; ownerName: string | null };
const search = async (q: string, who = cookie): Promise<Found[]> => {
  const response = await searchRoute(request(`/api/patients?q=${encodeURIComponent(q)}`, { cookie: who }), undefined);
  expect(response.status).toBe(200);
  return (await body(response)).patients;
};
const names = (found: Found[]) => found.map((p) => p.name);

describe('patient search', () => {
  it('finds by name, ignoring case', async () => {
    expect(names(await search('bisc'))).toEqual(['Biscuit']);
    expect(names(await search('BISCUIT'))).toEqual(['Biscuit']);
    expect(names(await search('Willow'))).toEqual(['Willow']);
  });

  it('finds by part of the name anywhere in it', async () => {
    expect(names(await search('ementi'))).toEqual(['Clementine']);
  });

  it('finds by record number, case-insensitively', async () => {
    expect((await search('fh-1005')).map((p) => p.recordNumber)).toEqual(['FH-1005']);
  });

  it('ranks an exact record-number match first, ahead of the alphabetical order', async () => {
    const found = await search('FH-1010');
    expect(found.map((p) => p.recordNumber)).toEqual(['FH-1010', 'FH-10100']);
    expect(names(found)).toEqual(['Bramble', 'Aardvark']);
  });

  it('finds by owner name, with the owner in the answer', async () => {
    const found = await search('whitlow');
    expect(names(found)).toEqual(['Biscuit', 'Bramble']);
    for (const p of found) expect(p.ownerName).toBe('Agnes Whitlow');
  });

  it('orders other matches by name', async () => {
    // Bram Keswick owns Juniper and Sprocket.
    expect(names(await search('keswick'))).toEqual(['Juniper', 'Sprocket']);
  });

  it('treats % and _ literally (PostgreSQL docs §9.7.1: LIKE wildcards, escaped with backslash)', async () => {
    expect(names(await search('%'))).toEqual(['Half_Pint 50%']);
    expect(names(await search('50%'))).toEqual(['Half_Pint 50%']);
    // Unescaped, "f_" would also match Halfpint and Rufus, and "50%" would match "Halfpint 500".
    expect(names(await search('f_'))).toEqual(['Half_Pint 50%']);
    expect(await search('\\')).toEqual([]);
  });

  it('leaves closed records out', async () => {
    expect(await search('Ghost')).toEqual([]);
  });

  it('an empty query lists the active patients of the clinic', async () => {
    const all = await search('');
    expect(all).toHaveLength(12 + 3);
    expect(all.every((p) => p.recordNumber.startsWith('FH-'))).toBe(true);
  });

  it('honours the limit', async () => {
    const response = await searchRoute(request('/api/patients?q=&limit=2', { cookie }), undefined);
    expect((await body(response)).patients).toHaveLength(2);
  });
});

describe('clinic isolation', () => {
  it("one clinic's search never shows another clinic's patients", async () => {
    const ours = await search('Biscuit');
    expect(ours.map((p) => p.recordNumber)).toEqual(['FH-1001']);
    expect((await search('TR-0001'))).toEqual([]);
    expect(await search('Abernathy')).toEqual([]);

    const theirCookie = await signIn(other.tech.email, 'other-clinic-pass-1');
    const theirs = await search('Biscuit', theirCookie);
    expect(theirs.map((p) => p.recordNumber)).toEqual(['TR-0001']);
    expect(await search('Whitlow', theirCookie)).toEqual([]);
  });

  it("opening another clinic's patient by id is 404", async () => {
    const response = await patientRoute(request('/api/patients/x', { cookie }), params({ patientId: other.patient.id }));
    expect(response.status).toBe(404); // RFC 9110 §15.5.5
    const ours = await patientByRecord(database.db, clinicId, 'FH-1001');
    const mine = await patientRoute(request('/api/patients/x', { cookie }), params({ patientId: ours.id }));
    expect((await body(mine)).patient).toMatchObject({ name: 'Biscuit', recordNumber: 'FH-1001', ownerName: 'Agnes Whitlow', attendingVetName: 'Dr. Ilse Corvan' });
  });
});
