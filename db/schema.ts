// The one schema: every table, every constraint. Migrations are generated from it (npm run db:generate).
// Every row belongs to a clinic, so a clinic group can share one PostgreSQL server later.
import { sql } from 'drizzle-orm';
import { PATIENT_SEXES, SAMPLE_TYPES, SPECIES } from './vocabulary';
import {
  smallint,
  bigint,
  boolean,
  check,
  date,
  doublePrecision,
  index,
  integer,
  jsonb,
  pgEnum,
  pgTable,
  text,
  timestamp,
  uniqueIndex,
  uuid,
  type AnyPgColumn,
} from 'drizzle-orm/pg-core';

const id = () => uuid().primaryKey().defaultRandom();
const createdAt = () => timestamp({ withTimezone: true }).notNull().defaultNow();
const clinicRef = () =>
  uuid()
    .notNull()
    .references(() => clinics.id, { onDelete: 'restrict' });

export const staffRole = pgEnum('staff_role', ['admin', 'veterinarian', 'technician']);
export const species = pgEnum('species', SPECIES);
export const patientSex = pgEnum('patient_sex', PATIENT_SEXES);
/** 'active' is an open record; a merged record points at the one it was merged into. */
export const patientStatus = pgEnum('patient_status', ['active', 'deceased', 'archived', 'merged']);
/** 'control': a QC reading (recognised by sample ID, by the analyzer, or marked by hand); never on a patient. */
export const readingStatus = pgEnum('reading_status', ['unassigned', 'assigned', 'voided', 'control']);
export const captureStatus = pgEnum('capture_status', ['open', 'transcribed', 'dismissed']);
export const orderStatus = pgEnum('order_status', ['open', 'fulfilled', 'aborted', 'cancelled']);
export const sampleType = pgEnum('sample_type', SAMPLE_TYPES);
export const reviewKind = pgEnum('review_kind', ['comment', 'reviewed']);

/** Stands in for "no instrument" in unique indexes, so a species-wide default is unique too. */
const NO_INSTRUMENT = sql`'00000000-0000-0000-0000-000000000000'::uuid`;

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
    /** Set when an administrator gave a temporary password: the person chooses their own at next sign-in. */
    mustChangePassword: boolean().notNull().default(false),
    /** Veterinarians on duty see every open critical result live, not only their own patients'. */
    onDuty: boolean().notNull().default(true),
    createdAt: createdAt(),
    lastSignInAt: timestamp({ withTimezone: true }),
  },
  (t) => [
    // Sign-in is by e-mail alone, so an address names one person across all clinics on a server.
    uniqueIndex('staff_users_email_key').on(sql`lower(${t.email})`),
    index('staff_users_clinic_idx').on(t.clinicId),
  ],
);

/** One signed-in browser. The cookie names its row, so signing out ends it on the server too. */
export const staffSessions = pgTable(
  'staff_sessions',
  {
    id: id(),
    clinicId: clinicRef(),
    userId: uuid()
      .notNull()
      .references(() => staffUsers.id, { onDelete: 'cascade' }),
    createdAt: createdAt(),
    expiresAt: timestamp({ withTimezone: true }).notNull(),
    endedAt: timestamp({ withTimezone: true }),
  },
  (t) => [index('staff_sessions_user_idx').on(t.userId)],
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
    /** True when the date of birth was worked out from an estimated age rather than known. */
    dateOfBirthEstimated: boolean().notNull().default(false),
    weightKg: doublePrecision(),
    /** The day the weight was taken: a dose worked out from an old weight is a risk. */
    weightMeasuredOn: date({ mode: 'string' }),
    ownerId: uuid().references(() => owners.id, { onDelete: 'set null' }),
    attendingVetId: uuid().references(() => staffUsers.id, { onDelete: 'set null' }),
    /** An open record (status 'active'): takes new results and orders, listed by default. */
    active: boolean().notNull().default(true),
    status: patientStatus().notNull().default('active'),
    deceasedOn: date({ mode: 'string' }),
    mergedIntoId: uuid().references((): AnyPgColumn => patients.id, { onDelete: 'restrict' }),
    createdAt: createdAt(),
    updatedAt: timestamp({ withTimezone: true }),
  },
  (t) => [
    uniqueIndex('patients_clinic_record_key').on(t.clinicId, t.recordNumber),
    // Record numbers printed on readings are matched case-insensitively (Intake, the exact-ID rule).
    index('patients_clinic_record_lower_idx').on(t.clinicId, sql`lower(${t.recordNumber})`),
    index('patients_clinic_name_idx').on(t.clinicId, sql`lower(${t.name})`),
    index('patients_owner_idx').on(t.ownerId),
    // Trigram indexes for substring search on name and record number (and owners' names and phones) are
    // hand-written in migrations 0013 and 0021: they need the pg_trgm extension created first.
    check('patients_weight_positive', sql`${t.weightKg} is null or ${t.weightKg} > 0`),
    // Hand-written in migration 0010 (after existing rows are brought in line): active = (status = 'active'),
    // and status 'merged' exactly when merged_into_id is set; an insert with only active = false becomes 'archived'.
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
  /** 'connect' (default): the bridge dials a serial-to-network adapter; 'listen': the analyzer dials the bridge. */
  | { kind: 'tcp'; host: string; port: number; mode?: 'connect' | 'listen' };

export interface InstrumentReadSettings {
  decimalMark?: 'point' | 'comma';
  receivingApplication?: string;
  receivingFacility?: string;
}

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
    /** How many runs it holds at once; a single-channel reader finishes its runs in the order they started. */
    channels: integer().notNull().default(1),
    /** How the bridge reads it: number format (decimal point or comma) and the name it answers as (HL7 ACK MSH-3/4). */
    readSettings: jsonb().$type<InstrumentReadSettings>().notNull().default(sql`'{}'::jsonb`),
    /** Lab quality: room temperature the instrument may run at (from its manual), for the daily log. */
    operatingMinC: doublePrecision(),
    operatingMaxC: doublePrecision(),
    active: boolean().notNull().default(true),
    createdAt: createdAt(),
  },
  (t) => [
    uniqueIndex('instruments_clinic_code_key').on(t.clinicId, t.code),
    check('instruments_channels_positive', sql`${t.channels} >= 1`),
  ],
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

/**
 * A raw capture file an administrator imported for one instrument (bytes recorded from its line by the
 * bridge's capture log or another recorder): what was read, by whom, and what it added. Its readings and
 * unparsed captures point here instead of at a bridge.
 */
export const captureImports = pgTable(
  'capture_imports',
  {
    id: id(),
    clinicId: clinicRef(),
    instrumentId: uuid()
      .notNull()
      .references(() => instruments.id, { onDelete: 'restrict' }),
    instrumentCode: text().notNull(),
    /** How the file was read: the instrument's dialect, and for a printout profile its key and version. */
    dialect: text().notNull(),
    profileKey: uuid(),
    profileVersion: bigint({ mode: 'number' }),
    fileName: text().notNull(),
    fileBytes: integer().notNull(),
    /** SHA-256 of the file's bytes, hex: tells an administrator the same file was imported before. */
    sha256: text().notNull(),
    importedBy: uuid()
      .notNull()
      .references(() => staffUsers.id, { onDelete: 'restrict' }),
    readingsAdded: integer().notNull(),
    readingsAlreadyStored: integer().notNull(),
    capturesAdded: integer().notNull(),
    capturesAlreadyStored: integer().notNull(),
    createdAt: createdAt(),
  },
  (t) => [index('capture_imports_clinic_idx').on(t.clinicId, t.createdAt), index('capture_imports_sha_idx').on(t.clinicId, t.sha256)],
);

/**
 * One sample on one instrument: the readings of one tube (same instrument and sample ID), of one ASTM or
 * HL7 message, or of one printed slip. Intake lists specimens, and a panel is assigned, moved or voided
 * as one; each reading keeps its own assignment history.
 */
export const specimens = pgTable(
  'specimens',
  {
    id: id(),
    clinicId: clinicRef(),
    instrumentId: uuid().references(() => instruments.id, { onDelete: 'set null' }),
    instrumentCode: text().notNull(),
    sampleId: text(),
    patientRef: text(),
    /** When its first reading arrived. */
    receivedAt: timestamp({ withTimezone: true }).notNull(),
    /** Set when a person split a reading off another specimen (that one's id). */
    splitFrom: uuid().references((): AnyPgColumn => specimens.id, { onDelete: 'restrict' }),
    createdAt: createdAt(),
  },
  (t) => [
    index('specimens_clinic_sample_idx').on(t.clinicId, t.instrumentCode, sql`lower(${t.sampleId})`, t.receivedAt),
    // A message's specimen (no sample ID) is looked up among its instrument's recent unlabelled ones only.
    index('specimens_message_idx').on(t.clinicId, t.instrumentCode, t.receivedAt).where(sql`${t.sampleId} is null and ${t.splitFrom} is null`),
  ],
);

export const readings = pgTable(
  'readings',
  {
    id: id(),
    clinicId: clinicRef(),
    /** The bridge that sent it; null for a reading read from an imported capture file (captureImportId). */
    bridgeId: uuid().references(() => bridges.id, { onDelete: 'restrict' }),
    captureImportId: uuid().references(() => captureImports.id, { onDelete: 'restrict' }),
    /** Set by the bridge when it first spooled the record; a resend carries the same key. */
    idempotencyKey: text().notNull(),
    instrumentId: uuid().references(() => instruments.id, { onDelete: 'set null' }),
    /** As the bridge named it, kept even when no instrument with that code is configured. */
    instrumentCode: text().notNull(),
    instrumentSerial: text(),
    /** As the instrument sent them (ASTM R.6 / R.9, HL7 OBX-7 / OBX-11). */
    instrumentRange: text(),
    resultStatus: text().$type<'final' | 'preliminary' | 'corrected'>(),
    analyte: text().notNull(),
    value: doublePrecision(),
    /** A coded result (HL7 CE/CWE, an ASTM word such as POS): { system, code, display }. At most one of value, valueCode, valueText. */
    valueCode: jsonb().$type<{ system: string | null; code: string; display: string | null }>(),
    /** A text result (HL7 ST/TX/FT). */
    valueText: text(),
    /** Comments the instrument sent with the result (HL7 NTE, ASTM C records). */
    notes: text().array().notNull().default(sql`'{}'::text[]`),
    /** Typed in by a person from an unparsed capture: who. Null for everything an instrument sent. */
    enteredBy: uuid().references(() => staffUsers.id, { onDelete: 'restrict' }),
    comparator: text().$type<'<' | '>'>(),
    /** The unit it is read in: as printed, or the UCUM unit the clinic mapped the printed text to (instrument_units). */
    unit: text(),
    /** Set only when the unit was mapped on arrival: the text the instrument printed. */
    printedUnit: text(),
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
    /** Lab quality: the kit lot loaded in the instrument when it arrived (it used one test of it). */
    kitLotId: uuid().references((): AnyPgColumn => kitLots.id, { onDelete: 'restrict' }),
    /** Lab quality: for status 'control', the control material it measured (null until someone picks one). */
    controlMaterialId: uuid().references((): AnyPgColumn => controlMaterials.id, { onDelete: 'restrict' }),
    /** Lab quality marks fixed when it arrived: 'qc-failed' (QC for it was rejected), 'kit-expired'. */
    qualityMarks: text().array().notNull().default(sql`'{}'::text[]`),
    /** The sample it was measured on; set at ingest (older rows get their own specimen in the migration). */
    specimenId: uuid().references((): AnyPgColumn => specimens.id, { onDelete: 'restrict' }),
    /** Digits after the decimal mark as the instrument printed the value ("5.0" → 1, "26" → 0); null when unknown (typed in, older rows). */
    valueDecimals: smallint(),
    /** Arrival order: ingest numbers a batch's readings in the order the bridge sent them (the analyzer's own order). */
    arrival: bigint({ mode: 'number' }).generatedByDefaultAsIdentity(),
  },
  (t) => [
    uniqueIndex('readings_bridge_key').on(t.bridgeId, t.idempotencyKey),
    // A capture import looks for what is already stored by content (the bridge's keys are random).
    index('readings_content_idx').on(t.clinicId, t.instrumentCode, sql`md5(${t.raw})`),
    check('readings_one_source', sql`(${t.bridgeId} is null) <> (${t.captureImportId} is null)`),
    index('readings_clinic_status_idx').on(t.clinicId, t.status, t.receivedAt),
    index('readings_patient_idx').on(t.patientId, t.measuredAt),
    // A patient's record in its own order (lib/readings/queries.ts recordOrder): the chart's newest page is
    // read straight off this index instead of sorting every result of a long record.
    index('readings_record_order_idx')
      .on(t.patientId, sql`(coalesce(${t.measuredAt}, ${t.receivedAt})) desc`, sql`${t.receivedAt} desc`, t.arrival, t.id)
      .where(sql`${t.status} = 'assigned'`),
    // A specimen's readings; with the measurement time, the message lookup at ingest reads no reading it rejects.
    index('readings_specimen_idx').on(t.specimenId, t.measuredAt),
    check('readings_comparator_valid', sql`${t.comparator} is null or ${t.comparator} in ('<', '>')`),
    check(
      'readings_one_kind_of_value',
      sql`(${t.value} is not null)::int + (${t.valueCode} is not null)::int + (${t.valueText} is not null)::int <= 1`,
    ),
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
    /** The bridge that sent it; null when it came from an imported capture file (captureImportId). */
    bridgeId: uuid().references(() => bridges.id, { onDelete: 'restrict' }),
    captureImportId: uuid().references(() => captureImports.id, { onDelete: 'restrict' }),
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
    index('unparsed_captures_content_idx').on(t.clinicId, t.instrumentCode, sql`md5(${t.raw})`),
    check('unparsed_captures_one_source', sql`(${t.bridgeId} is null) <> (${t.captureImportId} is null)`),
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
    /** Null only for the clinic's opt-in exact-ID rule, which a bridge's upload sets off (the audit event names the bridge). */
    assignedBy: uuid().references(() => staffUsers.id, { onDelete: 'restrict' }),
    assignedAt: createdAt(),
    /** How the match was made: 'manual' (searched), 'suggestion' (a ranked match a person confirmed) or 'auto-sample-id'. */
    method: text().notNull().default('manual'),
    /** The order this reading fulfilled, if it was matched to one. */
    orderId: uuid().references((): AnyPgColumn => labOrders.id, { onDelete: 'restrict' }),
    endedAt: timestamp({ withTimezone: true }),
    endedBy: uuid().references(() => staffUsers.id, { onDelete: 'restrict' }),
    endReason: text(),
    /** First sign-off of this assignment; kept by a trigger on result_reviews, so Review's list is an index range. */
    reviewedAt: timestamp({ withTimezone: true }),
  },
  (t) => [
    // One reading is on at most one patient at a time; history rows keep ended_at.
    uniqueIndex('result_assignments_one_current')
      .on(t.readingId)
      .where(sql`${t.endedAt} is null`),
    // Review: current assignments nobody has signed off yet, newest first.
    index('result_assignments_unreviewed_idx')
      .on(t.clinicId, t.assignedAt)
      .where(sql`${t.endedAt} is null and ${t.reviewedAt} is null`),
    index('result_assignments_patient_idx').on(t.patientId),
    check('result_assignments_by_person_or_rule', sql`${t.assignedBy} is not null or ${t.method} = 'auto-sample-id'`),
    check('result_assignments_end_reason', sql`${t.endedAt} is null or ${t.endReason} is not null`),
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
    // The audit viewer's "by patient" filter.
    index('audit_events_patient_idx').on(t.clinicId, sql`(${t.details} ->> 'patientId')`),
  ],
);

/**
 * How the clinic uses an analyte: the unit results are kept and compared in (UCUM), the unit it shows,
 * the species it is validated for, and the delta check that guards against wrong-patient assignment.
 */
export const analyteSettings = pgTable(
  'analyte_settings',
  {
    id: id(),
    clinicId: clinicRef(),
    /** As instruments print it (e.g. "cCRP"). */
    code: text().notNull(),
    name: text().notNull(),
    /** UCUM unit that intervals, statistics and delta checks use. */
    unit: text().notNull(),
    /** UCUM unit the clinic reads results in (e.g. mg/L or mg/dL). */
    displayUnit: text().notNull(),
    decimals: integer().notNull().default(1),
    /** Species the test is validated for; others get a clear warning, never a silent result. */
    validatedSpecies: species().array().notNull().default(sql`'{}'::species[]`),
    speciesNote: text(),
    /** Flag "check patient identity" when a result moves more than both limits within the window. */
    deltaAbsolute: doublePrecision(),
    deltaPercent: doublePrecision(),
    deltaWindowHours: doublePrecision(),
    deltaSource: text(),
    /** Qualitative results: the codes that mean abnormal (e.g. POS), when the analyzer does not flag them itself. */
    abnormalCodes: text().array().notNull().default(sql`'{}'::text[]`),
    updatedBy: uuid().references(() => staffUsers.id, { onDelete: 'set null' }),
    updatedAt: createdAt(),
  },
  (t) => [
    uniqueIndex('analyte_settings_clinic_code_key').on(t.clinicId, t.code),
    check('analyte_settings_decimals', sql`${t.decimals} between 0 and 6`),
  ],
);

/** One stage of a run on the bench: mixing, re-insertion, incubation… */
export interface ProtocolStage {
  key: string;
  label: string;
  /** Nominal length of the stage. */
  seconds: number;
  /** When set, the run is aborted if the stage takes longer (e.g. re-insert within 10 s). */
  maxSeconds?: number | null;
  /** True where a person must act during the stage (the board calls for attention). */
  handsOn?: boolean;
}

/** How long a test takes on the bench, per analyte and (optionally) instrument; stages are data. */
export const runProtocols = pgTable(
  'run_protocols',
  {
    id: id(),
    clinicId: clinicRef(),
    analyte: text().notNull(),
    instrumentId: uuid().references(() => instruments.id, { onDelete: 'cascade' }),
    name: text().notNull(),
    stages: jsonb().$type<ProtocolStage[]>().notNull(),
    /** How far before / after the due time a reading may arrive and still match by timing. */
    earlySeconds: integer().notNull().default(60),
    lateSeconds: integer().notNull().default(180),
    source: text().notNull(),
    updatedBy: uuid().references(() => staffUsers.id, { onDelete: 'set null' }),
    updatedAt: createdAt(),
  },
  (t) => [
    uniqueIndex('run_protocols_clinic_analyte_instrument_key').on(
      t.clinicId,
      t.analyte,
      sql`coalesce(${t.instrumentId}, ${NO_INSTRUMENT})`,
    ),
    check('run_protocols_tolerances', sql`${t.earlySeconds} >= 0 and ${t.lateSeconds} >= 0`),
  ],
);

/** A test started for a patient on the bench. A reading fulfils at most one order and an order takes one reading. */
export const labOrders = pgTable(
  'lab_orders',
  {
    id: id(),
    clinicId: clinicRef(),
    patientId: uuid()
      .notNull()
      .references(() => patients.id, { onDelete: 'restrict' }),
    analyte: text().notNull(),
    instrumentId: uuid().references(() => instruments.id, { onDelete: 'set null' }),
    sampleType: sampleType().notNull(),
    /** The label on the tube or cartridge, when there is one: an exact match is the strongest evidence. */
    sampleId: text(),
    /** For lab quality later: which kit lot the test came from. */
    kitLot: text(),
    /** Lab quality: the kit lot loaded for this analyte when the test started (an aborted run uses one test). */
    kitLotId: uuid().references((): AnyPgColumn => kitLots.id, { onDelete: 'restrict' }),
    orderedBy: uuid()
      .notNull()
      .references(() => staffUsers.id, { onDelete: 'restrict' }),
    startedBy: uuid()
      .notNull()
      .references(() => staffUsers.id, { onDelete: 'restrict' }),
    startedAt: timestamp({ withTimezone: true }).notNull(),
    /** From the protocol's stages at start; the stages are copied so later protocol edits do not move it. */
    dueAt: timestamp({ withTimezone: true }).notNull(),
    protocolId: uuid().references(() => runProtocols.id, { onDelete: 'set null' }),
    stages: jsonb().$type<ProtocolStage[]>().notNull().default([]),
    status: orderStatus().notNull().default('open'),
    fulfilledReadingId: uuid().references(() => readings.id, { onDelete: 'restrict' }),
    fulfilledAt: timestamp({ withTimezone: true }),
    /** An aborted run still used up a test (kit stock, QC counts). */
    testConsumed: boolean().notNull().default(false),
    closedBy: uuid().references(() => staffUsers.id, { onDelete: 'restrict' }),
    closedAt: timestamp({ withTimezone: true }),
    closeReason: text(),
    note: text(),
    createdAt: createdAt(),
  },
  (t) => [
    // Two readings can never fulfil one order, nor one reading two orders.
    uniqueIndex('lab_orders_fulfilled_reading_key').on(t.fulfilledReadingId),
    index('lab_orders_clinic_status_idx').on(t.clinicId, t.status, t.dueAt),
    index('lab_orders_patient_idx').on(t.patientId, t.startedAt),
    check('lab_orders_fulfilled_has_reading', sql`(${t.status} = 'fulfilled') = (${t.fulfilledReadingId} is not null)`),
    check('lab_orders_due_after_start', sql`${t.dueAt} >= ${t.startedAt}`),
  ],
);

export interface InterpretationBand {
  label: string;
  /** Inclusive lower bound; null means open below. */
  from: number | null;
  /** Exclusive upper bound; null means open above. */
  to: number | null;
}

/** Reference interval per analyte and species (optionally per instrument), with where each default came from. */
export const referenceIntervals = pgTable(
  'reference_intervals',
  {
    id: id(),
    clinicId: clinicRef(),
    analyte: text().notNull(),
    species: species().notNull(),
    instrumentId: uuid().references(() => instruments.id, { onDelete: 'cascade' }),
    /** UCUM unit of the limits below. */
    unit: text().notNull(),
    low: doublePrecision(),
    high: doublePrecision(),
    criticalLow: doublePrecision(),
    criticalHigh: doublePrecision(),
    bands: jsonb().$type<InterpretationBand[]>().notNull().default([]),
    source: text().notNull(),
    updatedBy: uuid().references(() => staffUsers.id, { onDelete: 'set null' }),
    updatedAt: createdAt(),
  },
  (t) => [
    uniqueIndex('reference_intervals_key').on(t.clinicId, t.analyte, t.species, sql`coalesce(${t.instrumentId}, ${NO_INSTRUMENT})`),
    check('reference_intervals_order', sql`${t.low} is null or ${t.high} is null or ${t.low} <= ${t.high}`),
    check(
      'reference_intervals_critical_order',
      sql`(${t.criticalLow} is null or ${t.low} is null or ${t.criticalLow} <= ${t.low}) and (${t.criticalHigh} is null or ${t.high} is null or ${t.criticalHigh} >= ${t.high})`,
    ),
  ],
);

/** A veterinarian's comment or sign-off on one assignment of a result. Append-only (trigger in the migrations). */
export const resultReviews = pgTable(
  'result_reviews',
  {
    id: id(),
    clinicId: clinicRef(),
    readingId: uuid()
      .notNull()
      .references(() => readings.id, { onDelete: 'restrict' }),
    /** Reviews belong to the result as it was on this patient; a reassigned result needs a new review. */
    assignmentId: uuid()
      .notNull()
      .references(() => resultAssignments.id, { onDelete: 'restrict' }),
    reviewerId: uuid()
      .notNull()
      .references(() => staffUsers.id, { onDelete: 'restrict' }),
    kind: reviewKind().notNull(),
    comment: text(),
    at: createdAt(),
  },
  (t) => [index('result_reviews_reading_idx').on(t.readingId, t.at), index('result_reviews_assignment_idx').on(t.assignmentId)],
);

/** A critical result raised for the patient's attending veterinarian; listed until someone acknowledges it. */
export const resultAlerts = pgTable(
  'result_alerts',
  {
    id: id(),
    clinicId: clinicRef(),
    readingId: uuid()
      .notNull()
      .references(() => readings.id, { onDelete: 'restrict' }),
    assignmentId: uuid()
      .notNull()
      .references(() => resultAssignments.id, { onDelete: 'restrict' }),
    patientId: uuid()
      .notNull()
      .references(() => patients.id, { onDelete: 'restrict' }),
    /** The attending veterinarian then; null when the patient had none (every veterinarian sees it). */
    recipientId: uuid().references(() => staffUsers.id, { onDelete: 'set null' }),
    kind: text().$type<'critical-low' | 'critical-high'>().notNull(),
    /** What was flagged, as it stood when raised (intervals may change later). */
    message: text().notNull(),
    threshold: doublePrecision().notNull(),
    unit: text().notNull(),
    createdAt: createdAt(),
    acknowledgedBy: uuid().references(() => staffUsers.id, { onDelete: 'restrict' }),
    acknowledgedAt: timestamp({ withTimezone: true }),
    acknowledgeNote: text(),
    /** Set when the reading left this patient (reassigned or voided): the alert no longer applies. */
    withdrawnAt: timestamp({ withTimezone: true }),
    /** When nobody had acknowledged it in time and it was e-mailed to the clinic's escalation list. */
    escalatedAt: timestamp({ withTimezone: true }),
    escalationMailId: uuid().references((): AnyPgColumn => outboundMail.id, { onDelete: 'set null' }),
  },
  (t) => [
    uniqueIndex('result_alerts_assignment_key').on(t.assignmentId),
    index('result_alerts_clinic_open_idx').on(t.clinicId, t.acknowledgedAt, t.createdAt),
    check('result_alerts_kind', sql`${t.kind} in ('critical-low', 'critical-high')`),
  ],
);

// ───────────── Lab quality: kit lots, operating conditions, control materials, goals, verifications ─────────────

/** A reagent kit lot for one analyte. Tests left = tests per kit × kits − runs that used it (patient, QC, aborted). */
export const kitLots = pgTable(
  'kit_lots',
  {
    id: id(),
    clinicId: clinicRef(),
    analyte: text().notNull(),
    lotNumber: text().notNull(),
    expiresOn: date({ mode: 'string' }).notNull(),
    testsPerKit: integer().notNull(),
    kits: integer().notNull().default(1),
    openedOn: date({ mode: 'string' }),
    storageNotes: text(),
    /** Loaded in this instrument: its readings of the analyte use this lot. */
    instrumentId: uuid().references(() => instruments.id, { onDelete: 'set null' }),
    /** Warn when this many tests or fewer are left. */
    lowAt: integer().notNull().default(5),
    /** Taken out of use (used up or discarded). */
    finishedAt: timestamp({ withTimezone: true }),
    createdBy: uuid().references(() => staffUsers.id, { onDelete: 'set null' }),
    createdAt: createdAt(),
  },
  (t) => [
    uniqueIndex('kit_lots_clinic_analyte_lot_key').on(t.clinicId, t.analyte, t.lotNumber),
    index('kit_lots_loaded_idx').on(t.clinicId, t.instrumentId, t.analyte),
    check('kit_lots_counts_positive', sql`${t.testsPerKit} >= 1 and ${t.kits} >= 1 and ${t.lowAt} >= 0`),
  ],
);

/** The lab's room temperature, one entry per day (the clinic's own calendar day). */
export const roomTemperatureLogs = pgTable(
  'room_temperature_logs',
  {
    id: id(),
    clinicId: clinicRef(),
    day: date({ mode: 'string' }).notNull(),
    temperatureC: doublePrecision().notNull(),
    note: text(),
    recordedBy: uuid()
      .notNull()
      .references(() => staffUsers.id, { onDelete: 'restrict' }),
    recordedAt: createdAt(),
  },
  (t) => [
    uniqueIndex('room_temperature_logs_clinic_day_key').on(t.clinicId, t.day),
    check('room_temperature_logs_plausible', sql`${t.temperatureC} between -30 and 60`),
  ],
);

/** A control material (one level of one lot) with its target from the insert or from the clinic's own runs. */
export const controlMaterials = pgTable(
  'control_materials',
  {
    id: id(),
    clinicId: clinicRef(),
    analyte: text().notNull(),
    /** Only QC from this instrument counts; null: any instrument. */
    instrumentId: uuid().references(() => instruments.id, { onDelete: 'set null' }),
    name: text().notNull(),
    lotNumber: text().notNull(),
    level: text().notNull(),
    /** The sample ID the control is run under (what the analyzer prints or the technician types), if any. */
    sampleId: text(),
    unit: text().notNull(),
    targetMean: doublePrecision().notNull(),
    targetSd: doublePrecision().notNull(),
    targetSource: text().$type<'insert' | 'established'>().notNull(),
    expiresOn: date({ mode: 'string' }),
    active: boolean().notNull().default(true),
    createdBy: uuid().references(() => staffUsers.id, { onDelete: 'set null' }),
    createdAt: createdAt(),
  },
  (t) => [
    uniqueIndex('control_materials_clinic_key').on(t.clinicId, t.analyte, t.lotNumber, t.level),
    check('control_materials_sd_positive', sql`${t.targetSd} > 0`),
    check('control_materials_target_source', sql`${t.targetSource} in ('insert', 'established')`),
  ],
);

/** Allowable total error per analyte, with where it came from, for the sigma metric. */
export const qualityGoals = pgTable(
  'quality_goals',
  {
    id: id(),
    clinicId: clinicRef(),
    analyte: text().notNull(),
    teaPercent: doublePrecision().notNull(),
    source: text().notNull(),
    updatedBy: uuid().references(() => staffUsers.id, { onDelete: 'set null' }),
    updatedAt: createdAt(),
  },
  (t) => [
    uniqueIndex('quality_goals_clinic_analyte_key').on(t.clinicId, t.analyte),
    check('quality_goals_tea_positive', sql`${t.teaPercent} > 0`),
  ],
);

/** A reference-interval verification with the clinic's own healthy animals; the interval is copied as it stood. */
export const intervalVerifications = pgTable(
  'interval_verifications',
  {
    id: id(),
    clinicId: clinicRef(),
    intervalId: uuid().references(() => referenceIntervals.id, { onDelete: 'set null' }),
    analyte: text().notNull(),
    species: species().notNull(),
    unit: text().notNull(),
    low: doublePrecision(),
    high: doublePrecision(),
    intervalSource: text().notNull(),
    values: doublePrecision().array().notNull(),
    secondValues: doublePrecision().array(),
    decision: text().notNull(),
    note: text(),
    performedBy: uuid()
      .notNull()
      .references(() => staffUsers.id, { onDelete: 'restrict' }),
    performedAt: createdAt(),
  },
  (t) => [index('interval_verifications_clinic_idx').on(t.clinicId, t.analyte, t.species)],
);

export type KitLot = typeof kitLots.$inferSelect;
export type RoomTemperatureLog = typeof roomTemperatureLogs.$inferSelect;
export type ControlMaterial = typeof controlMaterials.$inferSelect;
export type QualityGoal = typeof qualityGoals.$inferSelect;
export type IntervalVerification = typeof intervalVerifications.$inferSelect;

export const mailStatus = pgEnum('mail_status', ['queued', 'sent', 'failed']);

export interface MailAttachment {
  filename: string;
  contentType: string;
  /** The bytes, base64: attachments are small (a report PDF) and must survive a restart until sent. */
  contentBase64: string;
}

/**
 * Every e-mail Benchwire sends, queued in the sender's transaction and delivered by the mail worker with
 * retries and backoff. A message that could not be delivered stays here as 'failed', never dropped.
 */
export const outboundMail = pgTable(
  'outbound_mail',
  {
    id: id(),
    clinicId: clinicRef(),
    /** Why it was sent: 'report', 'alert-escalation', 'invitation', 'password-reset'. */
    purpose: text().notNull(),
    toAddresses: text().array().notNull(),
    subject: text().notNull(),
    textBody: text().notNull(),
    htmlBody: text(),
    attachments: jsonb().$type<MailAttachment[]>().notNull().default([]),
    status: mailStatus().notNull().default('queued'),
    attempts: integer().notNull().default(0),
    maxAttempts: integer().notNull().default(6),
    nextAttemptAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    lastError: text(),
    lastAttemptAt: timestamp({ withTimezone: true }),
    sentAt: timestamp({ withTimezone: true }),
    /** The Message-ID the SMTP server accepted. */
    messageId: text(),
    patientId: uuid().references(() => patients.id, { onDelete: 'restrict' }),
    createdBy: uuid().references(() => staffUsers.id, { onDelete: 'set null' }),
    createdAt: createdAt(),
  },
  (t) => [
    index('outbound_mail_due_idx').on(t.status, t.nextAttemptAt),
    index('outbound_mail_patient_idx').on(t.patientId, t.createdAt),
    check('outbound_mail_has_recipient', sql`cardinality(${t.toAddresses}) > 0`),
  ],
);

/** A result report for one patient and visit day, sent by a veterinarian; its delivery is its mail row. */
export const resultReports = pgTable(
  'result_reports',
  {
    id: id(),
    clinicId: clinicRef(),
    patientId: uuid()
      .notNull()
      .references(() => patients.id, { onDelete: 'restrict' }),
    /** The visit: the calendar day (clinic time zone) the results were measured. */
    visitDate: date({ mode: 'string' }).notNull(),
    /** The results the report held when sent. */
    readingIds: uuid().array().notNull(),
    recipientKind: text().$type<'owner' | 'referring-vet'>().notNull(),
    recipientName: text(),
    recipientEmail: text().notNull(),
    message: text(),
    mailId: uuid()
      .notNull()
      .references(() => outboundMail.id, { onDelete: 'restrict' }),
    sentBy: uuid()
      .notNull()
      .references(() => staffUsers.id, { onDelete: 'restrict' }),
    createdAt: createdAt(),
  },
  (t) => [
    index('result_reports_patient_idx').on(t.patientId, t.createdAt),
    check('result_reports_recipient_kind', sql`${t.recipientKind} in ('owner', 'referring-vet')`),
  ],
);

/** A system that reads results over the FHIR API (a practice-management system, a referral lab). */
export const integrationTokens = pgTable(
  'integration_tokens',
  {
    id: id(),
    clinicId: clinicRef(),
    name: text().notNull(),
    /** sha256 of the bearer token, as for bridges (256-bit random tokens). */
    tokenHash: text().notNull(),
    tokenHint: text().notNull(),
    createdBy: uuid().references(() => staffUsers.id, { onDelete: 'set null' }),
    createdAt: createdAt(),
    revokedAt: timestamp({ withTimezone: true }),
    lastUsedAt: timestamp({ withTimezone: true }),
  },
  (t) => [uniqueIndex('integration_tokens_hash_key').on(t.tokenHash), index('integration_tokens_clinic_idx').on(t.clinicId)],
);

/** Single-use, expiring links for staff: an invitation to set a first password, or a password reset. */
export const staffTokens = pgTable(
  'staff_tokens',
  {
    id: id(),
    clinicId: clinicRef(),
    userId: uuid()
      .notNull()
      .references(() => staffUsers.id, { onDelete: 'cascade' }),
    purpose: text().$type<'invite' | 'reset'>().notNull(),
    /** sha256 of the 256-bit random token; the token itself is only in the e-mail. */
    tokenHash: text().notNull(),
    expiresAt: timestamp({ withTimezone: true }).notNull(),
    usedAt: timestamp({ withTimezone: true }),
    /** An administrator withdrew the link (revoked, or replaced by a resent invitation): it no longer works. */
    revokedAt: timestamp({ withTimezone: true }),
    createdBy: uuid().references(() => staffUsers.id, { onDelete: 'set null' }),
    createdAt: createdAt(),
  },
  (t) => [
    uniqueIndex('staff_tokens_hash_key').on(t.tokenHash),
    index('staff_tokens_user_idx').on(t.userId),
    check('staff_tokens_purpose', sql`${t.purpose} in ('invite', 'reset')`),
  ],
);

export type Clinic = typeof clinics.$inferSelect;
export type StaffUser = typeof staffUsers.$inferSelect;
export type StaffSession = typeof staffSessions.$inferSelect;
export type StaffRole = (typeof staffRole.enumValues)[number];
export type Patient = typeof patients.$inferSelect;
export type Owner = typeof owners.$inferSelect;
/**
 * Units an instrument printed that UCUM cannot read, exactly as printed, listed for an administrator, and
 * the UCUM unit each is mapped to. A mapping applies to readings that arrive after it is saved (fixed on
 * the reading, the printed text kept beside it); earlier readings keep their unread unit.
 */
export const instrumentUnits = pgTable(
  'instrument_units',
  {
    id: id(),
    clinicId: clinicRef(),
    instrumentId: uuid()
      .notNull()
      .references(() => instruments.id, { onDelete: 'restrict' }),
    printed: text().notNull(),
    /** UCUM unit later readings are read in; null until an administrator maps it. */
    ucum: text(),
    /** Readings that arrived with this unit (mapped or not). */
    readingCount: integer().notNull().default(0),
    firstSeenAt: createdAt(),
    lastSeenAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    mappedBy: uuid().references(() => staffUsers.id, { onDelete: 'restrict' }),
    mappedAt: timestamp({ withTimezone: true }),
  },
  (t) => [uniqueIndex('instrument_units_instrument_printed_key').on(t.instrumentId, t.printed)],
);
export type InstrumentUnit = typeof instrumentUnits.$inferSelect;

export type Instrument = typeof instruments.$inferSelect;
export type Bridge = typeof bridges.$inferSelect;
export type Reading = typeof readings.$inferSelect;
export type Specimen = typeof specimens.$inferSelect;
export type UnparsedCapture = typeof unparsedCaptures.$inferSelect;
export type ResultAssignment = typeof resultAssignments.$inferSelect;
export type AuditEvent = typeof auditEvents.$inferSelect;
export type PrintoutProfile = typeof printoutProfiles.$inferSelect;
export type AnalyteSetting = typeof analyteSettings.$inferSelect;
export type RunProtocol = typeof runProtocols.$inferSelect;
export type LabOrder = typeof labOrders.$inferSelect;
export type ReferenceInterval = typeof referenceIntervals.$inferSelect;
export type ResultReview = typeof resultReviews.$inferSelect;
export type ResultAlert = typeof resultAlerts.$inferSelect;
export type OutboundMail = typeof outboundMail.$inferSelect;
export type ResultReport = typeof resultReports.$inferSelect;
export type PatientStatus = (typeof patientStatus.enumValues)[number];
export type IntegrationToken = typeof integrationTokens.$inferSelect;
export type Species = (typeof species.enumValues)[number];
export type SampleType = (typeof sampleType.enumValues)[number];

/**
 * Sign-in throttling counters (rate-limiter-flexible's Drizzle store): in the database so the limits hold
 * across app instances and restarts. Keys: `account:<e-mail>` and `address:<client address>`.
 */
export const rateLimits = pgTable('rate_limits', {
  key: text().primaryKey(),
  points: integer().notNull().default(0),
  expire: timestamp({ withTimezone: true }),
});
export type CaptureImport = typeof captureImports.$inferSelect;

/**
 * How many times what a cached view reads has changed, per scope: `patient:<id>` (the patient's row,
 * results, assignments, reviews and alerts), `results:<clinic id>` (any patient's of that clinic) and
 * `setup` (intervals, analytes, instruments, kit lots, room temperatures, staff names, clinic settings).
 * Kept by triggers on those tables (migration 0023), so no write can forget it; lib/view-cache.ts serves
 * a view again only while its scopes' versions are unchanged.
 */
export const recordVersions = pgTable('record_versions', {
  scope: text().primaryKey(),
  version: bigint({ mode: 'number' }).notNull().default(0),
});
