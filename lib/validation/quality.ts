import { z } from 'zod';

// Request shapes for lab quality: kit lots, the room-temperature log, control materials, QC readings,
// quality goals (TEa) and reference-interval verifications.

const day = z.iso.date('Give a date as YYYY-MM-DD.');
const optionalText = (max: number) =>
  z
    .string()
    .trim()
    .max(max)
    .nullish()
    .transform((v) => (v ? v : null));

export const kitLotSchema = z.object({
  analyte: z.string().trim().min(1, 'Choose the test.').max(64),
  lotNumber: z.string().trim().min(1, 'Give the lot number.').max(64),
  expiresOn: day,
  testsPerKit: z.number().int().min(1, 'At least one test per kit.').max(10000),
  kits: z.number().int().min(1).max(1000).default(1),
  openedOn: day.nullish().transform((v) => v ?? null),
  storageNotes: optionalText(500),
  instrumentId: z.uuid().nullish().transform((v) => v ?? null),
  lowAt: z.number().int().min(0).max(10000).default(5),
});
export type KitLotInput = z.infer<typeof kitLotSchema>;

/** Load into an instrument, open, finish: the changes a technician makes to a lot after receiving it. */
export const kitLotUpdateSchema = z
  .object({
    openedOn: day.nullable().optional(),
    instrumentId: z.uuid().nullable().optional(),
    storageNotes: optionalText(500).optional(),
    finished: z.boolean().optional(),
    lowAt: z.number().int().min(0).max(10000).optional(),
  })
  .refine((v) => Object.keys(v).length > 0, { message: 'Nothing to change.' });
export type KitLotUpdate = z.infer<typeof kitLotUpdateSchema>;

export const temperatureEntrySchema = z.object({
  day,
  temperatureC: z.number().min(-30, 'Below −30 °C is not a room temperature.').max(60, 'Above 60 °C is not a room temperature.'),
  note: optionalText(500),
});
export type TemperatureEntryInput = z.infer<typeof temperatureEntrySchema>;

export const controlMaterialSchema = z.object({
  analyte: z.string().trim().min(1, 'Choose the test.').max(64),
  instrumentId: z.uuid().nullish().transform((v) => v ?? null),
  name: z.string().trim().min(1, 'Name the control.').max(120),
  lotNumber: z.string().trim().min(1, 'Give the lot number.').max(64),
  level: z.string().trim().min(1, 'Give the level (e.g. 1, 2, low, high).').max(32),
  sampleId: optionalText(64),
  unit: z.string().trim().min(1).max(32),
  targetMean: z.number().finite(),
  targetSd: z.number().positive('The SD must be above 0.'),
  expiresOn: day.nullish().transform((v) => v ?? null),
});
export type ControlMaterialInput = z.infer<typeof controlMaterialSchema>;

/** Mark a waiting reading as a control run (by hand in Intake), naming the material when known. */
export const markControlSchema = z.object({
  controlMaterialId: z.uuid().nullish().transform((v) => v ?? null),
  note: optionalText(500),
});

/** Pick the control material for a QC reading that arrived without one. */
export const setControlMaterialSchema = z.object({ controlMaterialId: z.uuid('Choose a control material.') });

export const qualityGoalSchema = z.object({
  analyte: z.string().trim().min(1).max(64),
  teaPercent: z.number().positive('TEa must be above 0 %.').max(100),
  source: z.string().trim().min(3, 'Say where the TEa comes from.').max(500),
});
export type QualityGoalInput = z.infer<typeof qualityGoalSchema>;

const values = z.array(z.number().finite()).max(200);

export const verificationSchema = z.object({
  intervalId: z.uuid('Choose the reference interval to verify.'),
  values: values.min(1, 'Enter the reference samples’ values.'),
  secondValues: values.nullish().transform((v) => (v && v.length ? v : null)),
  note: optionalText(1000),
});
export type VerificationInput = z.infer<typeof verificationSchema>;

const qcPatternText = z.string().trim().max(200);

/** Clinic-wide QC switches kept in clinics.settings under their own keys. */
const qualitySettingsShape = {
  /** Sample IDs matching this regular expression (case-insensitive) are QC runs, never patient results. */
  qcSampleIdPattern: qcPatternText.default('^QC'),
  /** Minutes without a heartbeat after which a bridge is shown offline. */
  bridgeOfflineMinutes: z
    .number({ error: 'Give the minutes as a number.' })
    .int('Whole minutes only.')
    .min(1, 'At least 1 minute.')
    .max(1440, 'At most 1440 minutes (a day).')
    .default(3),
  /** Days before expiry a kit lot is warned about. */
  kitWarnDays: z
    .number({ error: 'Give the days as a number.' })
    .int('Whole days only.')
    .min(0, 'At least 0 days.')
    .max(365, 'At most 365 days.')
    .default(30),
};

/** The settings as stored: each was checked when it was saved, so reading them back needs no pattern engine. */
export const storedQualitySettingsSchema = z.object(qualitySettingsShape);

/**
 * What an administrator saves, in the form and in the handler: the QC pattern must also run in the
 * linear-time engine. The engine (about 45 kB gzipped) is imported when a pattern is checked, not with
 * the Admin page, so this schema is parsed asynchronously (zodResolver and readJson both do).
 */
export const qualitySettingsSchema = z.object({
  ...qualitySettingsShape,
  qcSampleIdPattern: qcPatternText
    .superRefine(async (p, ctx) => {
      const { compileLinePattern } = await import('./pattern');
      const compiled = compileLinePattern(p, { ignoreCase: true });
      if (!compiled.ok) ctx.addIssue({ code: 'custom', message: `Not a valid regular expression: ${compiled.reason}` });
    })
    .default('^QC'),
});
export type QualitySettings = z.infer<typeof qualitySettingsSchema>;
export const qualitySettingsUpdateSchema = qualitySettingsSchema.partial();

export const qcQuery = z.object({ analyte: z.string().trim().max(64).optional() });
