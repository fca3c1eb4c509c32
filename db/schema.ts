// The one schema: every table, every constraint. Migrations are generated from it (npm run db:generate).
// Every row belongs to a clinic, so a clinic group can share one PostgreSQL server later.
import { sql } from 'drizzle-orm';
import {
  bigint,
  boolean,
  check,
  date,
  doublePrecision,
  index,
  jsonb,
  pgEnum,
  pgTable,
  text,
  timestamp,
  uniqueIndex,
  uuid,
} from 'drizzle-orm/pg-core';

const id = () => uuid().primaryKey().defaultRandom();
const createdAt = () => timestamp({ withTimezone: true }).notNull().defaultNow();
const clinicRef = () =>
  uuid()
    .notNull()
    .references(() => clinics.id, { onDelete: 'restrict' });

export const staffRole = pgEnum('staff_role', ['admin', 'veterinarian', 'technician']);
export const species = pgEnum('species', ['dog', 'cat', 'rabbit', 'ferret', 'bird', 'reptile', 'other']);
export const patientSex = pgEnum('patient_sex', [
  'male',
  'male_neutered',
  'female',
  'female_spayed',
  'unknown',
]);
export const readingStatus = pgEnum('reading_status', ['unassigned', 'assigned', 'voided']);
export const captureStatus = pgEnum('capture_status', ['open', 'transcribed', 'dismissed']);

export const clinics = pgTable('clinics', {
  id: id(),
  name: text().notNull(),
  timeZone: text().notNull().default('UTC'),
  /** Clinic-wide switches (e.g. auto-assign on exact sample ID), validated by lib/validation. */
  settings: jsonb().$type<Record<string, unknown>>().notNull().default({}),
  createdAt: createdAt(),
});

export const staffUsers = pgTable(
  'staff_users',
  {
    id: id(),
    clinicId: clinicRef(),
    email: text().notNull(),
    displayName: text().notNull(),
    role: staffRole().notNull(),
    passwordHash: text().notNull(),
    active: boolean().notNull().default(true),
    createdAt: createdAt(),
    lastSignInAt: timestamp({ withTimezone: true }),
  },
  (t) => [
    // Sign-in is by e-mail alone, so an address names one person across all clinics on a server.
    uniqueIndex('staff_users_email_key').on(sql`lower(${t.email})`),
    index('staff_users_clinic_idx').on(t.clinicId),
  ],
);

export const owners = pgTable(
  'owners',
  {
    id: id(),
    clinicId: clinicRef(),
    name: text().notNull(),
    phone: text(),
    email: text(),
    createdAt: createdAt(),
  },
  (t) => [index('owners_clinic_idx').on(t.clinicId)],
);

export const patients = pgTable(
  'patients',
  {
    id: id(),
    clinicId: clinicRef(),
    recordNumber: text().notNull(),
    name: text().notNull(),
    species: species().notNull(),
    breed: text(),
    sex: patientSex().notNull().default('unknown'),
    dateOfBirth: date({ mode: 'string' }),
    weightKg: doublePrecision(),
    ownerId: uuid().references(() => owners.id, { onDelete: 'set null' }),
    attendingVetId: uuid().references(() => staffUsers.id, { onDelete: 'set null' }),
    active: boolean().notNull().default(true),
    createdAt: createdAt(),
  },
  (t) => [
    uniqueIndex('patients_clinic_record_key').on(t.clinicId, t.recordNumber),
    index('patients_clinic_name_idx').on(t.clinicId, sql`lower(${t.name})`),
    check('patients_weight_positive', sql`${t.weightKg} is null or ${t.weightKg} > 0`),
  ],
);

export const bridges = pgTable(
  'bridges',
  {
    id: id(),
    clinicId: clinicRef(),
    name: text().notNull(),
    /** sha256 of the bearer token: tokens are 256-bit random, so a fast hash is enough and lookups stay indexed. */
    tokenHash: text().notNull(),
    /** First characters of the token, to tell tokens apart in the admin list. */
    tokenHint: text().notNull(),
    createdBy: uuid().references(() => staffUsers.id, { onDelete: 'set null' }),
    createdAt: createdAt(),
    revokedAt: timestamp({ withTimezone: true }),
    lastSeenAt: timestamp({ withTimezone: true }),
    lastHeartbeat: jsonb().$type<Record<string, unknown>>(),
  },
  (t) => [uniqueIndex('bridges_token_hash_key').on(t.tokenHash), index('bridges_clinic_idx').on(t.clinicId)],
);

/** How a bridge reaches an instrument; kept as data so the bridge can pull it later. */
export type InstrumentConnection =
  | {
      kind: 'serial';
      path: string;
      baudRate: number;
      dataBits: 5 | 6 | 7 | 8;
      parity: 'none' | 'even' | 'odd' | 'mark' | 'space';
      stopBits: 1 | 1.5 | 2;
      flowControl?: 'none' | 'rtscts' | 'xonxoff';
    }
  | { kind: 'tcp'; host: string; port: number };

export const instruments = pgTable(
  'instruments',
  {
    id: id(),
    clinicId: clinicRef(),
    /** Short code the bridge sends with each record (e.g. "crp-reader-1"). */
    code: text().notNull(),
    name: text().notNull(),
    analytes: text().array().notNull().default(sql`'{}'::text[]`),
    dialect: text().notNull(),
    connection: jsonb().$type<InstrumentConnection>(),
    bridgeId: uuid().references(() => bridges.id, { onDelete: 'set null' }),
    serialNumber: text(),
    /** For dialect 'profile': which admin-defined printout profile (its latest version is used). */
    profileId: uuid(),
    /** Latest link health the bridge reported for this instrument (open/closed, line-noise warnings). */
    health: jsonb().$type<Record<string, unknown>>(),
    active: boolean().notNull().default(true),
    createdAt: createdAt(),
  },
  (t) => [uniqueIndex('instruments_clinic_code_key').on(t.clinicId, t.code)],
);

/**
 * Admin-defined printout profiles for text-printing analyzers: declarative data, never code.
 * Versioned: a change is a new row with version + 1; readings keep the version that parsed them.
 */
export const printoutProfiles = pgTable(
  'printout_profiles',
  {
    id: id(),
    clinicId: clinicRef(),
    /** Stable identity across versions. */
    profileKey: uuid().notNull(),
    name: text().notNull(),
    version: bigint({ mode: 'number' }).notNull(),
    definition: jsonb().$type<Record<string, unknown>>().notNull(),
    createdBy: uuid().references(() => staffUsers.id, { onDelete: 'set null' }),
    createdAt: createdAt(),
  },
  (t) => [uniqueIndex('printout_profiles_key_version').on(t.profileKey, t.version), index('printout_profiles_clinic_idx').on(t.clinicId)],
);

export const readings = pgTable(
  'readings',
  {
    id: id(),
    clinicId: clinicRef(),
    bridgeId: uuid()
      .notNull()
      .references(() => bridges.id, { onDelete: 'restrict' }),
    /** Set by the bridge when it first spooled the record; a resend carries the same key. */
    idempotencyKey: text().notNull(),
    instrumentId: uuid().references(() => instruments.id, { onDelete: 'set null' }),
    /** As the bridge named it, kept even when no instrument with that code is configured. */
    instrumentCode: text().notNull(),
    instrumentSerial: text(),
    analyte: text().notNull(),
    value: doublePrecision(),
    comparator: text().$type<'<' | '>'>(),
    unit: text(),
    flags: text().array().notNull().default(sql`'{}'::text[]`),
    sampleId: text(),
    patientRef: text(),
    measuredAt: timestamp({ withTimezone: true }),
    receivedAt: timestamp({ withTimezone: true }).notNull(),
    storedAt: createdAt(),
    raw: text().notNull(),
    status: readingStatus().notNull().default('unassigned'),
    /** The current assignment, denormalised for listing; result_assignments holds the history. */
    patientId: uuid().references(() => patients.id, { onDelete: 'restrict' }),
  },
  (t) => [
    uniqueIndex('readings_bridge_key').on(t.bridgeId, t.idempotencyKey),
    index('readings_clinic_status_idx').on(t.clinicId, t.status, t.receivedAt),
    index('readings_patient_idx').on(t.patientId, t.measuredAt),
    check('readings_comparator_valid', sql`${t.comparator} is null or ${t.comparator} in ('<', '>')`),
    check(
      'readings_assigned_has_patient',
      sql`(${t.status} = 'assigned') = (${t.patientId} is not null)`,
    ),
  ],
);

/** Bytes from an instrument that did not form a reading: kept for a person to read, transcribe or dismiss. */
export const unparsedCaptures = pgTable(
  'unparsed_captures',
  {
    id: id(),
    clinicId: clinicRef(),
    bridgeId: uuid()
      .notNull()
      .references(() => bridges.id, { onDelete: 'restrict' }),
    idempotencyKey: text().notNull(),
    instrumentId: uuid().references(() => instruments.id, { onDelete: 'set null' }),
    instrumentCode: text().notNull(),
    raw: text().notNull(),
    reason: text().notNull(),
    receivedAt: timestamp({ withTimezone: true }).notNull(),
    storedAt: createdAt(),
    status: captureStatus().notNull().default('open'),
    /** Who transcribed or dismissed it, when and why; the reading typed from it, if any. */
    handledBy: uuid().references(() => staffUsers.id, { onDelete: 'restrict' }),
    handledAt: timestamp({ withTimezone: true }),
    handlingNote: text(),
    transcribedReadingId: uuid().references(() => readings.id, { onDelete: 'restrict' }),
  },
  (t) => [
    uniqueIndex('unparsed_captures_bridge_key').on(t.bridgeId, t.idempotencyKey),
    index('unparsed_captures_clinic_status_idx').on(t.clinicId, t.status, t.receivedAt),
  ],
);

export const resultAssignments = pgTable(
  'result_assignments',
  {
    id: id(),
    clinicId: clinicRef(),
    readingId: uuid()
      .notNull()
      .references(() => readings.id, { onDelete: 'restrict' }),
    patientId: uuid()
      .notNull()
      .references(() => patients.id, { onDelete: 'restrict' }),
    assignedBy: uuid()
      .notNull()
      .references(() => staffUsers.id, { onDelete: 'restrict' }),
    assignedAt: createdAt(),
    /** How the match was made: 'manual' now; suggestions and sample-ID rules later. */
    method: text().notNull().default('manual'),
    endedAt: timestamp({ withTimezone: true }),
    endedBy: uuid().references(() => staffUsers.id, { onDelete: 'restrict' }),
    endReason: text(),
  },
  (t) => [
    // One reading is on at most one patient at a time; history rows keep ended_at.
    uniqueIndex('result_assignments_one_current')
      .on(t.readingId)
      .where(sql`${t.endedAt} is null`),
    index('result_assignments_patient_idx').on(t.patientId),
  ],
);

/** Append-only: a trigger in the migrations refuses UPDATE and DELETE. */
export const auditEvents = pgTable(
  'audit_events',
  {
    id: bigint({ mode: 'number' }).primaryKey().generatedAlwaysAsIdentity(),
    clinicId: clinicRef(),
    at: timestamp({ withTimezone: true }).notNull().defaultNow(),
    actorUserId: uuid().references(() => staffUsers.id, { onDelete: 'restrict' }),
    actorBridgeId: uuid().references(() => bridges.id, { onDelete: 'restrict' }),
    action: text().notNull(),
    entityType: text().notNull(),
    entityId: text().notNull(),
    details: jsonb().$type<Record<string, unknown>>().notNull().default({}),
  },
  (t) => [
    index('audit_events_entity_idx').on(t.entityType, t.entityId, t.at),
    index('audit_events_clinic_idx').on(t.clinicId, t.at),
  ],
);

export type Clinic = typeof clinics.$inferSelect;
export type StaffUser = typeof staffUsers.$inferSelect;
export type StaffRole = (typeof staffRole.enumValues)[number];
export type Patient = typeof patients.$inferSelect;
export type Owner = typeof owners.$inferSelect;
export type Instrument = typeof instruments.$inferSelect;
export type Bridge = typeof bridges.$inferSelect;
export type Reading = typeof readings.$inferSelect;
export type UnparsedCapture = typeof unparsedCaptures.$inferSelect;
export type ResultAssignment = typeof resultAssignments.$inferSelect;
export type AuditEvent = typeof auditEvents.$inferSelect;
export type PrintoutProfile = typeof printoutProfiles.$inferSelect;
