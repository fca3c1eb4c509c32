import { randomUUID } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import {
  assignSchema,
  idParam,
  instrumentCodeSchema,
  newBridgeSchema,
  newInstrumentSchema,
  newStaffSchema,
  patientSearchQuery,
  readingStatusQuery,
  setupSchema,
  signInSchema,
  updateStaffSchema,
  voidSchema,
} from '@/lib/validation/api';

const paths = (result: { success: boolean; error?: { issues: { path: PropertyKey[] }[] } }) =>
  (result.error?.issues ?? []).map((i) => i.path.join('.'));

describe('signInSchema', () => {
  it('folds the e-mail address to lower case', () => {
    // Common practice, no source: sign-in by e-mail ignores case (db/schema.ts indexes lower(email)).
    expect(signInSchema.parse({ email: 'Admin@Fernhollow.Example', password: 'x' }).email).toBe('admin@fernhollow.example');
  });

  it('refuses a missing password and a malformed address', () => {
    expect(paths(signInSchema.safeParse({ email: 'admin@fernhollow.example', password: '' }))).toEqual(['password']);
    expect(paths(signInSchema.safeParse({ email: 'not-an-address', password: 'x' }))).toEqual(['email']);
  });
});

describe('setupSchema and newStaffSchema', () => {
  const setup = { clinicName: 'Alder Brook Clinic', displayName: 'Runa Velt', email: 'runa@alderbrook.example', password: 'long-enough-pass' };

  it('defaults the time zone to UTC', () => {
    expect(setupSchema.parse(setup).timeZone).toBe('UTC');
  });

  it('needs a password of at least 12 characters', () => {
    // Product rule (lib/validation/api.ts); NIST SP 800-63B §5.1.1.2 asks for at least 8 (from memory).
    expect(paths(setupSchema.safeParse({ ...setup, password: 'elevenchars' }))).toEqual(['password']);
    expect(setupSchema.safeParse({ ...setup, password: 'twelve-chars' }).success).toBe(true);
    expect(paths(newStaffSchema.safeParse({ ...setup, role: 'technician', password: 'short' }))).toEqual(['password']);
  });

  it('knows the three staff roles only', () => {
    const staff = { displayName: 'Runa Velt', email: 'runa@alderbrook.example', password: 'long-enough-pass' };
    for (const role of ['admin', 'veterinarian', 'technician']) expect(newStaffSchema.safeParse({ ...staff, role }).success).toBe(true);
    expect(paths(newStaffSchema.safeParse({ ...staff, role: 'owner' }))).toEqual(['role']);
  });
});

describe('updateStaffSchema', () => {
  it('takes a role and/or the active switch', () => {
    expect(updateStaffSchema.parse({ active: false })).toEqual({ active: false });
    expect(paths(updateStaffSchema.safeParse({ active: 'no' }))).toEqual(['active']);
  });
});

describe('newBridgeSchema', () => {
  it('needs a name of at least 2 characters after trimming', () => {
    expect(newBridgeSchema.parse({ name: '  Lab PC ' })).toEqual({ name: 'Lab PC' });
    expect(paths(newBridgeSchema.safeParse({ name: ' x ' }))).toEqual(['name']);
  });
});

describe('instrument schemas', () => {
  it.each(['crp-reader', 'chem-analyzer', 'a1', '9-lives'])('accepts code %s', (code) => {
    expect(instrumentCodeSchema.safeParse(code).success).toBe(true);
  });

  it.each(['CRP', '-lead', 'with space', 'under_score', 'x'])('rejects code %j', (code) => {
    expect(instrumentCodeSchema.safeParse(code).success).toBe(false);
  });

  const instrument = { code: 'haem-1', name: 'Haematology', analytes: ['WBC'], dialect: 'astm-e1394' };

  it('defaults serial flow control to none and coerces numeric strings from forms', () => {
    const parsed = newInstrumentSchema.parse({
      ...instrument,
      connection: { kind: 'serial', path: '/dev/ttyUSB0', baudRate: '9600', dataBits: 8, parity: 'none', stopBits: 1 },
    });
    expect(parsed.connection).toEqual({ kind: 'serial', path: '/dev/ttyUSB0', baudRate: 9600, dataBits: 8, parity: 'none', stopBits: 1, flowControl: 'none' });
  });

  it('limits a TCP port to 1..65535 (RFC 6335 §6: 16-bit ports, 0 reserved)', () => {
    const tcp = (port: number) => newInstrumentSchema.safeParse({ ...instrument, connection: { kind: 'tcp', host: '10.0.0.5', port } });
    expect(tcp(1).success).toBe(true);
    expect(tcp(65535).success).toBe(true);
    expect(paths(tcp(0))).toEqual(['connection.port']);
    expect(paths(tcp(65536))).toEqual(['connection.port']);
  });

  it('rejects serial data bits other than 5..8 (common UART settings, no source)', () => {
    const result = newInstrumentSchema.safeParse({
      ...instrument,
      connection: { kind: 'serial', path: '/dev/ttyUSB0', baudRate: 9600, dataBits: 9, parity: 'none', stopBits: 1 },
    });
    expect(paths(result)).toEqual(['connection.dataBits']);
  });

  it('names every bad field of an empty instrument', () => {
    expect(paths(newInstrumentSchema.safeParse({ code: 'x', name: '', analytes: [], dialect: '' }))).toEqual([
      'code',
      'name',
      'analytes',
      'dialect',
    ]);
  });
});

describe('reading actions and queries', () => {
  it('assign needs a UUID patient id (RFC 9562 format)', () => {
    const id = randomUUID();
    expect(assignSchema.parse({ patientId: id })).toEqual({ patientId: id });
    expect(paths(assignSchema.safeParse({ patientId: 'FH-1001' }))).toEqual(['patientId']);
    expect(idParam.safeParse(id).success).toBe(true);
    expect(idParam.safeParse('not-a-uuid').success).toBe(false);
  });

  it('void needs a reason of at least 3 characters after trimming', () => {
    expect(voidSchema.parse({ reason: ' control run ' })).toEqual({ reason: 'control run' });
    expect(paths(voidSchema.safeParse({ reason: '  x ' }))).toEqual(['reason']);
    expect(paths(voidSchema.safeParse({}))).toEqual(['reason']);
  });

  it('reading list defaults to unassigned, 100, and coerces the limit from the query string', () => {
    expect(readingStatusQuery.parse({})).toEqual({ status: 'unassigned', limit: 100 });
    expect(readingStatusQuery.parse({ status: 'all', limit: '5' })).toEqual({ status: 'all', limit: 5 });
    expect(paths(readingStatusQuery.safeParse({ limit: '0' }))).toEqual(['limit']);
    expect(paths(readingStatusQuery.safeParse({ status: 'deleted' }))).toEqual(['status']);
  });

  it('patient search trims q and caps the limit at 200', () => {
    expect(patientSearchQuery.parse({ q: '  bisc ' })).toEqual({ q: 'bisc', limit: 50 });
    expect(paths(patientSearchQuery.safeParse({ limit: '201' }))).toEqual(['limit']);
  });
});
