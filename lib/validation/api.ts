import { z } from 'zod';
import { ROLES } from '@/lib/auth/roles';
import { profileDefinitionSchema } from './profile';

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
  clinicName: z.string().trim().min(2, 'Enter the clinic name.').max(120),
  timeZone: z.string().trim().min(1).max(64).default('UTC'),
  displayName: z.string().trim().min(2, 'Enter your name.').max(120),
  email: emailAddress,
  password,
});
export type SetupInput = z.infer<typeof setupSchema>;

export const newStaffSchema = z.object({
  displayName: z.string().trim().min(2, 'Enter the name.').max(120),
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
  name: z.string().trim().min(2, 'Name the bridge (e.g. the lab PC it runs on).').max(80),
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
  name: z.string().trim().min(2, 'Name the instrument.').max(120),
  analytes: z
    .array(z.string().trim().min(1).max(64))
    .min(1, 'List at least one analyte.')
    .max(100),
  dialect: z.string().trim().min(1).max(64),
  serialNumber: z.string().trim().max(64).optional(),
  bridgeId: z.uuid().optional(),
  /** For dialect 'profile': the printout profile to read with (its latest version). */
  profileId: z.uuid().optional(),
  connection: z
    .discriminatedUnion('kind', [
      z.object({
        kind: z.literal('serial'),
        path: z.string().trim().min(1).max(200),
        baudRate: z.coerce.number().int().min(110).max(921600),
        dataBits: z.union([z.literal(5), z.literal(6), z.literal(7), z.literal(8)]),
        parity: z.enum(['none', 'even', 'odd', 'mark', 'space']),
        stopBits: z.union([z.literal(1), z.literal(1.5), z.literal(2)]),
        flowControl: z.enum(['none', 'rtscts', 'xonxoff']).default('none'),
      }),
      z.object({
        kind: z.literal('tcp'),
        host: z.string().trim().min(1).max(200),
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

export const readingStatusQuery = z.object({
  status: z.enum(['unassigned', 'assigned', 'voided', 'all']).default('unassigned'),
  limit: z.coerce.number().int().min(1).max(500).default(100),
});

export const assignSchema = z.object({
  patientId: z.uuid('Choose a patient.'),
  /** The open order this reading fulfils, when the match was made to one. */
  orderId: z.uuid().optional(),
  /** 'suggestion' when the person confirmed a ranked match; the audit trail keeps which. */
  method: z.enum(['manual', 'suggestion']).optional(),
});

export const voidSchema = z.object({
  reason: z.string().trim().min(3, 'Give a reason for voiding this reading.').max(500),
  /** Required to void a result that is already on a patient's record (it comes off, history kept). */
  onRecord: z.literal(true).optional(),
});

export const patientSearchQuery = z.object({
  q: z.string().trim().max(100).default(''),
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
  reason: z.string().trim().min(3, 'Say why this capture can be dismissed.').max(500),
});

/** A result typed by a person from an unparsed capture (read against the instrument's display or slip). */
export const transcribeCaptureSchema = z.object({
  analyte: z.string().trim().min(1, 'Enter the test.').max(64),
  value: z.coerce.number({ message: 'Enter the number as printed.' }).finite(),
  comparator: z.enum(['<', '>']).nullable().default(null),
  unit: z.string().trim().max(32).nullable().default(null),
  measuredAt: z.iso.datetime({ offset: true, message: 'Enter when it was measured.' }).nullable().default(null),
  sampleId: z.string().trim().max(64).nullable().default(null),
  note: z.string().trim().max(500).optional(),
});
export type TranscribeCaptureInput = z.infer<typeof transcribeCaptureSchema>;

export const saveProfileSchema = z.object({
  name: z.string().trim().min(2, 'Name the profile.').max(120),
  definition: profileDefinitionSchema,
});

export const previewProfileSchema = z.object({
  definition: profileDefinitionSchema,
  sample: z.string().max(256 * 1024, 'Paste at most 256 KB of printout.'),
});

/** An administrator invites a staff member by e-mail; they choose their own password from the link. */
export const inviteStaffSchema = z.object({
  displayName: z.string().trim().min(2, 'Enter the name.').max(120),
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
