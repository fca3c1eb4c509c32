import { z } from 'zod';
import { text, isoDateTime } from './text';
import { DECIMAL_MARKS, readNumber } from './numbers';
import { ROLES } from '@/lib/auth/roles';
import { CHART_PAGE } from '@/lib/clinical/chart-page';

// Request shapes shared by the forms in app/ and the route handlers.

/** Trimmed and lower-cased first, then checked: a pasted address with spaces is still an address. */
export const emailAddress = z.string().trim().toLowerCase().max(200).pipe(z.email('Enter a valid e-mail address.'));

export const signInSchema = z.object({
  email: emailAddress,
  password: z.string().min(1, 'Enter your password.').max(200),
});
export type SignInInput = z.infer<typeof signInSchema>;

const password = z
  .string()
  .min(12, 'Use at least 12 characters.')
  .max(200, 'Use at most 200 characters.');

export const setupSchema = z.object({
  clinicName: text(120, { min: 2, minMessage: 'Enter the clinic name.' }),
  timeZone: text(64, { min: 1 }).default('UTC'),
  displayName: text(120, { min: 2, minMessage: 'Enter your name.' }),
  email: emailAddress,
  password,
});
export type SetupInput = z.infer<typeof setupSchema>;

export const newStaffSchema = z.object({
  displayName: text(120, { min: 2, minMessage: 'Enter the name.' }),
  email: emailAddress,
  role: z.enum(ROLES),
  password,
});
export type NewStaffInput = z.infer<typeof newStaffSchema>;

export const updateStaffSchema = z.object({
  role: z.enum(ROLES).optional(),
  active: z.boolean().optional(),
});

export const newBridgeSchema = z.object({
  name: text(80, { min: 2, minMessage: 'Name the bridge (e.g. the lab PC it runs on).' }),
});
export type NewBridgeInput = z.infer<typeof newBridgeSchema>;

export const instrumentCodeSchema = z
  .string()
  .trim()
  .min(2)
  .max(64)
  .regex(/^[a-z0-9][a-z0-9-]*$/, 'Use lower-case letters, digits and dashes.');

export const newInstrumentSchema = z.object({
  code: instrumentCodeSchema,
  name: text(120, { min: 2, minMessage: 'Name the instrument.' }),
  analytes: z
    .array(text(64, { min: 1 }))
    .min(1, 'List at least one analyte.')
    .max(100),
  dialect: text(64, { min: 1 }),
  serialNumber: text(64).optional(),
  bridgeId: z.uuid().optional(),
  /** For dialect 'profile': the printout profile to read with (its latest version). */
  profileId: z.uuid().optional(),
  /** How the bridge reads its numbers, and the name it answers as (HL7 ACK MSH-3/4). */
  readSettings: z
    .object({
      decimalMark: z.enum(DECIMAL_MARKS).default('point'),
      receivingApplication: z.string().trim().max(64).optional(),
      receivingFacility: z.string().trim().max(64).optional(),
    })
    .default({ decimalMark: 'point' }),
  connection: z
    .discriminatedUnion('kind', [
      z.object({
        kind: z.literal('serial'),
        path: text(200, { min: 1 }),
        baudRate: z.coerce.number().int().min(110).max(921600),
        dataBits: z.union([z.literal(5), z.literal(6), z.literal(7), z.literal(8)]),
        parity: z.enum(['none', 'even', 'odd', 'mark', 'space']),
        stopBits: z.union([z.literal(1), z.literal(1.5), z.literal(2)]),
        flowControl: z.enum(['none', 'rtscts', 'xonxoff']).default('none'),
      }),
      z.object({
        kind: z.literal('tcp'),
        host: text(200, { min: 1 }),
        port: z.coerce.number().int().min(1).max(65535),
        mode: z.enum(['connect', 'listen']).default('connect'),
      }),
    ])
    .optional(),
}).refine((v) => v.dialect !== 'profile' || v.profileId, {
  path: ['profileId'],
  message: 'Choose the printout profile this instrument is read with.',
});

export type NewInstrumentInput = z.infer<typeof newInstrumentSchema>;

/** Admin → Units: the UCUM unit a printed unit is read as from now on (null removes the mapping). */
export const unitMappingSchema = z.object({
  ucum: text(32, { min: 1, minMessage: 'Write the UCUM unit (e.g. mg/dL), or remove the mapping.' }).nullable(),
});
export type UnitMappingInput = z.infer<typeof unitMappingSchema>;

/** Retire an instrument or return it to service, with a reason for the audit trail. */
export const instrumentServiceSchema = z.object({
  active: z.boolean(),
  reason: z.string().trim().min(3, 'Say why (e.g. replaced by the new analyzer).').max(500),
});

/** An administrator sets a temporary password; the person chooses their own at the next sign-in. */
export const temporaryPasswordSchema = z.object({ password });

export const changeOwnPasswordSchema = z
  .object({
    currentPassword: z.string().min(1, 'Enter the password you signed in with.').max(200),
    newPassword: password,
    confirmPassword: z.string().max(200),
  })
  .refine((v) => v.newPassword === v.confirmPassword, { path: ['confirmPassword'], message: 'The two new passwords differ.' })
  .refine((v) => v.newPassword !== v.currentPassword, { path: ['newPassword'], message: 'Choose a password different from the temporary one.' });
export type ChangeOwnPasswordInput = z.infer<typeof changeOwnPasswordSchema>;

export const readingStatusQuery = z.object({
  status: z.enum(['unassigned', 'assigned', 'voided', 'all']).default('unassigned'),
  limit: z.coerce.number().int().min(1).max(500).default(100),
});

/** Intake's list of waiting specimens: a page at a time, filtered by instrument, test and how long they waited. */
export const waitingQuery = z.object({
  page: z.coerce.number().int().min(1).max(100_000).default(1),
  pageSize: z.coerce.number().int().min(5).max(200).default(25),
  instrument: z.string().trim().max(64).optional().transform((v) => v || undefined),
  analyte: z.string().trim().max(64).optional().transform((v) => v || undefined),
  /** Only specimens that have waited at least this many minutes. */
  olderThanMinutes: z.coerce.number().int().min(0).max(7 * 24 * 60).optional(),
});
export type WaitingQuery = z.infer<typeof waitingQuery>;

/** Intake's suggestions for the readings it shows (its page), comma-separated; without it, every waiting reading. */
export const suggestionsQuery = z.object({
  readings: z
    .string()
    .max(200 * 37)
    .optional()
    .transform((v) => (v ? v.split(',').filter(Boolean) : undefined))
    .pipe(z.array(z.uuid('Not a valid reading id.')).max(200, 'At most 200 readings.').optional()),
});

const readingIdList = z.array(z.uuid()).min(1, 'Name the readings of the panel.').max(200);

/** A whole panel (the readings of one specimen the person saw) onto one patient. */
export const panelAssignSchema = z.object({
  patientId: z.uuid('Choose a patient.'),
  readingIds: readingIdList,
  /** Running tests the panel completes; each is matched to the panel's reading of its analyte. */
  orderIds: z.array(z.uuid()).max(200).optional(),
  method: z.enum(['manual', 'suggestion']).optional(),
});

export const panelReassignSchema = z.object({
  patientId: z.uuid('Choose a patient.'),
  readingIds: readingIdList,
  reason: z.string().trim().min(3, 'Give a reason for moving these results.').max(500),
  /** The patient the panel was on when the person chose to move it (the chart sends it): 409 if it moved meanwhile. */
  fromPatientId: z.uuid().optional(),
  /** The runs the panel completed will still give readings: keep them open (else they stay closed, tests used). */
  runWillGiveReading: z.boolean().optional(),
});

export const panelVoidSchema = z.object({
  readingIds: readingIdList,
  reason: z.string().trim().min(3, 'Give a reason for voiding this panel.').max(500),
  onRecord: z.literal(true).optional(),
});

export const assignSchema = z.object({
  patientId: z.uuid('Choose a patient.'),
  /** The open order this reading fulfils, when the match was made to one. */
  orderId: z.uuid().optional(),
  /** 'suggestion' when the person confirmed a ranked match; the audit trail keeps which. */
  method: z.enum(['manual', 'suggestion']).optional(),
});

export const voidSchema = z.object({
  reason: text(500, { min: 3, minMessage: 'Give a reason for voiding this reading.', multiline: true }),
  /** Required to void a result that is already on a patient's record (it comes off, history kept). */
  onRecord: z.literal(true).optional(),
});

export const patientSearchQuery = z.object({
  q: text(100).default(''),
  limit: z.coerce.number().int().min(1).max(200).default(50),
});

export const idParam = z.uuid('Not a valid id.');

/** How the bridge reads each kind of instrument; names match the bridge's dialect registry. */
export const DIALECT_LABELS: Record<string, string> = {
  'plain-printout': 'Text printout (single-test reader)',
  'astm-e1394': 'ASTM E1381/E1394 (LIS1/LIS2)',
  hl7v2: 'HL7 v2 over MLLP',
  profile: 'Printout profile (Admin → Printout profiles)',
};

export const dismissCaptureSchema = z.object({
  reason: text(500, { min: 3, minMessage: 'Say why this capture can be dismissed.', multiline: true }),
});

/**
 * A result typed by a person from an unparsed capture (read against the instrument's display or slip).
 * The test comes from the clinic's list and the unit from that test's units (checked on the server too);
 * the value may be written with a decimal point or a decimal comma, never with digit grouping.
 */
export const transcribeCaptureSchema = z.object({
  analyte: text(64, { min: 1, minMessage: 'Choose the test.' }),
  value: z.union([z.number().finite(), z.string()], { message: 'Enter the value as printed.' }).transform((v, ctx) => {
    if (typeof v === 'number') return v;
    if (/^\s*[<>]/.test(v)) {
      ctx.addIssue({ code: 'custom', message: 'Choose “below” or “above” in the comparator field and enter the number alone.' });
      return z.NEVER;
    }
    const read = readNumber(v, 'either');
    if (!read.ok) {
      ctx.addIssue({ code: 'custom', message: read.reason === 'holds no number' ? 'Enter the value as printed.' : `The value ${read.reason}.` });
      return z.NEVER;
    }
    return read.value;
  }),
  comparator: z.enum(['<', '>']).nullable().default(null),
  unit: text(32, { min: 1, minMessage: 'Choose the unit.' }),
  measuredAt: isoDateTime('Enter when it was measured.').nullable().default(null),
  sampleId: text(64).nullable().default(null),
  note: text(500, { multiline: true }).optional(),
});
export type TranscribeCaptureInput = z.infer<typeof transcribeCaptureSchema>;

const calendarDay = z.string().regex(/^\d{4}-\d{2}-\d{2}$/, 'Use a date (YYYY-MM-DD).');
const blankToUndefined = (v: unknown) => (v === '' ? undefined : v);

/** The admin audit viewer's filters (query string). */
export const auditQuery = z
  .object({
    patientId: z.preprocess(blankToUndefined, z.uuid('Not a valid patient id.').optional()),
    actorUserId: z.preprocess(blankToUndefined, z.uuid('Not a valid person id.').optional()),
    action: z.preprocess(blankToUndefined, z.string().trim().max(80).regex(/^[a-z_.-]+$/, 'Not an action name.').optional()),
    from: z.preprocess(blankToUndefined, calendarDay.optional()),
    to: z.preprocess(blankToUndefined, calendarDay.optional()),
    before: z.preprocess(blankToUndefined, z.coerce.number().int().positive().optional()),
    limit: z.coerce.number().int().min(1).max(200).default(50),
  })
  .refine((v) => !v.from || !v.to || v.from <= v.to, { path: ['to'], message: 'The end date is before the start date.' });

/** An administrator invites a staff member by e-mail; they choose their own password from the link. */
export const inviteStaffSchema = z.object({
  displayName: text(120, { min: 2, minMessage: 'Enter the name.' }),
  email: emailAddress,
  role: z.enum(ROLES),
});
export type InviteStaffInput = z.infer<typeof inviteStaffSchema>;

export const resetRequestSchema = z.object({ email: emailAddress });

/** Setting a password from an invitation or reset link. */
export const setPasswordSchema = z.object({
  token: z.string().min(20, 'This link is incomplete.').max(200),
  password,
});

/** A patient's chart: how many of the newest results to send whole (the trend always has every result). */
export const chartQuery = z.object({
  limit: z.coerce.number({ error: 'Give the limit as a number.' }).int('A whole number of results.').min(1, 'At least 1 result.').max(100_000).default(CHART_PAGE),
});
