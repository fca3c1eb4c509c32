import { and, eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { body, patientByRecord } from './support';
import * as importRoute from '@/app/api/admin/patients/import/route';
import type { Database } from '@/db/client';
import { auditEvents, owners, patients } from '@/db/schema';
import { seededDatabase } from '../helpers/db';
import { signIn } from '../helpers/http';

// Patient CSV import through the route: preview writes nothing; confirm is one audited transaction;
// record numbers already on file are updated or skipped as chosen. Rows are invented demo data.

let database: Database;
let clinicId: string;
let admin: string;
let vet: string;

beforeAll(async () => {
  ({ database, clinicId } = await seededDatabase());
  admin = await signIn('admin@fernhollow.example');
  vet = await signIn('vet@fernhollow.example');
});

const CSV = [
  'Record No,Patient Name,Species,Breed,Sex,DOB,Weight,Owner,Phone,Email',
  'PM-5001,Sorrel,dog,Whippet,F,14/03/2020,13.2,Wren Ashby,+44 1632 960111,wren@example.org',
  'PM-5002,"Quince, jr",cat,,MN,01/07/2018,,Wren Ashby,,',
  'FH-1001,Biscuit,dog,Labrador Retriever,MN,12/04/2018,32.0,Agnes Whitlow,,agnes@example.org',
  'PM-5003,Bad Date,cat,,,31/02/2021,,,,',
].join('\r\n');

function upload(fields: Record<string, string>, content: string | Uint8Array<ArrayBuffer> = CSV, cookie = admin) {
  const form = new FormData();
  form.set('file', new File([content], 'practice-export.csv', { type: 'text/csv' }));
  for (const [k, v] of Object.entries(fields)) form.set(k, v);
  return importRoute.POST(new Request('http://benchwire.test/api/admin/patients/import', { method: 'POST', body: form, headers: { cookie } }), undefined);
}
const count = async () => (await database.db.select({ id: patients.id }).from(patients).where(eq(patients.clinicId, clinicId))).length;

describe('patient CSV import', () => {
  it('preview: maps columns from the headers, lists each row’s action and errors, writes nothing', async () => {
    const before = await count();
    const response = await upload({ step: 'preview', duplicates: 'update', dateFormat: 'DD/MM/YYYY' });
    expect(response.status).toBe(200);
    const preview = await body(response);
    expect(preview.mapping).toMatchObject({ recordNumber: 0, name: 1, species: 2, breed: 3, sex: 4, dateOfBirth: 5, weightKg: 6, ownerName: 7, ownerPhone: 8, ownerEmail: 9 });
    expect(preview.summary).toEqual({ rows: 4, create: 2, update: 1, skip: 0, error: 1 });
    expect(preview.rows[2]).toMatchObject({ row: 4, action: 'update', existingName: 'Biscuit' });
    expect(preview.rows[3].errors[0]).toContain('31/02/2021');
    expect(await count()).toBe(before);
  });

  it('confirm is refused while rows have errors (422, naming the rows), and nothing is written', async () => {
    const before = await count();
    const response = await upload({ step: 'confirm', duplicates: 'update', dateFormat: 'DD/MM/YYYY' });
    expect(response.status).toBe(422);
    const { error } = await body(response);
    expect(error.issues[0]).toMatchObject({ path: 'row 5' });
    expect(await count()).toBe(before);
  });

  it('skip: leaves the existing patient as it is, creates the new ones, audits the import', async () => {
    const before = await count();
    const response = await upload({ step: 'confirm', duplicates: 'skip', dateFormat: 'DD/MM/YYYY', skipInvalid: 'true' });
    expect(response.status).toBe(200);
    expect(await body(response)).toMatchObject({ created: 2, updated: 0, skip: 1, error: 1 });
    expect(await count()).toBe(before + 2);
    const sorrel = await patientByRecord(database.db, clinicId, 'PM-5001');
    expect(sorrel).toMatchObject({ name: 'Sorrel', species: 'dog', sex: 'female', dateOfBirth: '2020-03-14', weightKg: 13.2 });
    const [owner] = await database.db.select().from(owners).where(eq(owners.id, sorrel.ownerId!));
    expect(owner).toMatchObject({ name: 'Wren Ashby', email: 'wren@example.org' });
    expect((await patientByRecord(database.db, clinicId, 'PM-5002')).name).toBe('Quince, jr');
    expect((await patientByRecord(database.db, clinicId, 'FH-1001')).weightKg).toBe(31.5);
    const [audit] = await database.db.select().from(auditEvents).where(and(eq(auditEvents.clinicId, clinicId), eq(auditEvents.action, 'patients.imported')));
    expect(audit.details).toMatchObject({ file: 'practice-export.csv', created: 2, duplicates: 'skip', leftOut: [{ row: 5 }] });
  });

  it('update: a second import of the same file updates by record number, creating no duplicates', async () => {
    const before = await count();
    const response = await upload({ step: 'confirm', duplicates: 'update', dateFormat: 'DD/MM/YYYY', skipInvalid: 'true' });
    expect(await body(response)).toMatchObject({ created: 0, updated: 3 });
    expect(await count()).toBe(before);
    expect((await patientByRecord(database.db, clinicId, 'FH-1001')).weightKg).toBe(32);
  });

  it('a chosen mapping overrides the guess; a column out of range is 400', async () => {
    const swapped = await body(await upload({ step: 'preview', duplicates: 'skip', dateFormat: 'DD/MM/YYYY', mapping: JSON.stringify({ recordNumber: 0, name: 3, species: 2, dateOfBirth: null }) }));
    expect(swapped.rows[0].values.name).toBe('Whippet');
    expect((await upload({ step: 'preview', duplicates: 'skip', mapping: JSON.stringify({ recordNumber: 0, name: 40, species: 2 }) })).status).toBe(400);
  });

  it('wrong encoding, a missing file and a non-admin get clear 4xx answers', async () => {
    const latin1 = new Uint8Array([...new TextEncoder().encode('Record No,Patient Name,Species\nX-1,Ren'), 0xe9, ...new TextEncoder().encode(',cat\n')]);
    const bad = await upload({ step: 'preview', duplicates: 'skip' }, latin1);
    expect(bad.status).toBe(400);
    expect((await body(bad)).error.code).toBe('not_utf8');
    const form = new FormData();
    form.set('step', 'preview');
    form.set('duplicates', 'skip');
    const none = await importRoute.POST(new Request('http://benchwire.test/api/admin/patients/import', { method: 'POST', body: form, headers: { cookie: admin } }), undefined);
    expect(none.status).toBe(400);
    expect((await upload({ step: 'preview', duplicates: 'skip' }, CSV, vet)).status).toBe(403);
  });
});
