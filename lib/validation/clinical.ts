import { z } from 'zod';
import { text, isoDateTime } from './text';
import { SAMPLE_TYPES, SPECIES } from '@/db/vocabulary';
import { emailAddress } from './api';

// Request shapes for orders, matching, review, alerts and the clinic's clinical settings.

export const SAMPLE_TYPE_LABELS: Record<(typeof SAMPLE_TYPES)[number], string> = {
  whole_blood: 'Whole blood',
  serum: 'Serum',
  plasma: 'Plasma',
  urine: 'Urine',
  other: 'Other',
};

const optionalText = (max: number, multiline = false) =>
  text(max, { multiline })
    .optional()
    .transform((v) => (v ? v : undefined));

export const newOrderSchema = z.object({
  patientId: z.uuid('Choose a patient.'),
  analyte: text(64, { min: 1, minMessage: 'Choose the test.' }),
  instrumentId: z.uuid().optional(),
  sampleType: z.enum(SAMPLE_TYPES, 'Choose the sample type.'),
  sampleId: optionalText(64),
  kitLot: optionalText(64),
  orderedBy: z.uuid('Choose who ordered the test.'),
  /** When the run started; the past is allowed (started before it was entered), the future is not. */
  startedAt: isoDateTime().optional(),
  note: optionalText(500, true),
});
export type NewOrderInput = z.infer<typeof newOrderSchema>;

/** A reader's whole panel started on one sample: the same fields, with the tests in place of one test. */
export const newPanelSchema = newOrderSchema.omit({ analyte: true }).extend({
  instrumentId: z.uuid('Choose the reader whose panel runs.'),
  analytes: z
    .array(text(64, { min: 1, minMessage: 'Name the test.' }))
    .min(1, 'Choose at least one test.')
    .max(32)
    .refine((codes) => new Set(codes).size === codes.length, 'A test is listed twice.'),
});
export type NewPanelInput = z.infer<typeof newPanelSchema>;

export const closeOrderSchema = z.object({
  reason: text(500, { min: 3, minMessage: 'Give a reason.', multiline: true }),
});

export const ordersQuery = z.object({
  status: z.enum(['open', 'all']).default('open'),
  patientId: z.uuid().optional(),
});

export const reassignSchema = z.object({
  patientId: z.uuid('Choose a patient.'),
  /** The patient the result was on when the person chose to move it: 409 if it has moved meanwhile. */
  fromPatientId: z.uuid('Say which patient the result is being moved from.'),
  orderId: z.uuid().optional(),
  reason: text(500, { min: 3, minMessage: 'Give a reason for moving this result.', multiline: true }),
  /** The run the reading is taken off will still give a reading: reopen it (else it stays closed, test used). */
  runWillGiveReading: z.boolean().optional(),
});

export const reviewSchema = z
  .object({
    comment: optionalText(2000, true),
    reviewed: z.boolean().default(false),
  })
  .refine((v) => v.reviewed || v.comment, { message: 'Write a comment or sign the result off as reviewed.', path: ['comment'] });

/** Sign-off of one or many results from the Review list, with one optional comment for all of them. */
export const signOffSchema = z.object({
  readingIds: z.array(z.uuid('Not a valid result id.')).min(1, 'Choose at least one result to sign off.').max(200, 'Sign off at most 200 results at once.'),
  comment: optionalText(2000),
});

export const acknowledgeSchema = z.object({ note: optionalText(500, true) });

export const alertsQuery = z.object({
  status: z.enum(['open', 'all']).default('open'),
  /** '1': my patients (and patients with no attending); 'duty': everything while I am on duty, else mine. */
  mine: z.enum(['1', '0', 'duty']).default('0'),
});

export const unreviewedQuery = z.object({ mine: z.enum(['1', '0']).default('1') });

const escalationMinutes = z
  .number('Give the minutes as a number.')
  .int('Give whole minutes.')
  .min(1, 'At least 1 minute.')
  .max(240, 'At most 240 minutes (4 hours).');
const escalationEmails = z
  .array(emailAddress)
  .max(20, 'At most 20 addresses.');

/** Clinic-wide switches, kept in clinics.settings. */
export const clinicalSettingsSchema = z.object({
  /** Off unless an administrator turns it on: auto-assign on an exact sample ID to one open order. */
  autoAssignExactId: z.boolean().default(false),
  /** A critical result nobody acknowledged within this many minutes is e-mailed to the escalation list. */
  criticalEscalationMinutes: escalationMinutes.default(10),
  /** Who gets those e-mails (a duty phone's mailbox, the practice manager…); empty means none is sent. */
  escalationEmails: escalationEmails.default([]),
});
export type ClinicalSettings = z.infer<typeof clinicalSettingsSchema>;

/** A change to some switches; no defaults here, so an omitted switch keeps its value. */
export const clinicalSettingsPatchSchema = z
  .object({
    autoAssignExactId: z.boolean().optional(),
    criticalEscalationMinutes: escalationMinutes.optional(),
    escalationEmails: escalationEmails.optional(),
  })
  .strict();

/** A veterinarian going on or off duty (on duty: sees every open critical result live). */
export const dutySchema = z.object({ onDuty: z.boolean() });

const limit = z.number().finite().nullable();

export const intervalSchema = z
  .object({
    analyte: text(64, { min: 1 }),
    species: z.enum(SPECIES),
    instrumentId: z.uuid().nullable().default(null),
    unit: text(32, { min: 1 }),
    low: limit,
    high: limit,
    criticalLow: limit,
    criticalHigh: limit,
    bands: z
      .array(z.object({ label: text(60, { min: 1 }), from: limit, to: limit }))
      .max(10)
      .default([]),
    source: text(1000, { min: 3, minMessage: 'Say where the interval comes from (paper, instrument insert, in-house study).' }),
  })
  .refine((v) => v.low === null || v.high === null || v.low <= v.high, { message: 'The low limit must not be above the high limit.', path: ['low'] })
  .refine((v) => v.criticalLow === null || v.low === null || v.criticalLow <= v.low, {
    message: 'The critical low limit must not be above the low limit.',
    path: ['criticalLow'],
  })
  .refine((v) => v.criticalHigh === null || v.high === null || v.criticalHigh >= v.high, {
    message: 'The critical high limit must not be below the high limit.',
    path: ['criticalHigh'],
  });
export type IntervalInput = z.infer<typeof intervalSchema>;

export const analyteSettingsSchema = z.object({
  displayUnit: text(32, { min: 1 }),
  decimals: z.number().int().min(0).max(6),
  validatedSpecies: z.array(z.enum(SPECIES)).max(10),
  deltaAbsolute: z.number().positive().nullable(),
  deltaPercent: z.number().positive().nullable(),
  deltaWindowHours: z.number().positive().nullable(),
});
export type AnalyteSettingsInput = z.infer<typeof analyteSettingsSchema>;

/**
 * The per-test rule for coded results (POS/NEG, HL7 CE/CWE): the codes that mean abnormal when the analyzer
 * sends no flag of its own. Compared without regard to case, against the code and its display text.
 * An empty list removes the rule (such results are shown as "not interpreted").
 */
export const abnormalCodesSchema = z.object({
  /** For a test the clinic has no settings for yet: the name to show. */
  name: text(120).optional(),
  abnormalCodes: z
    .array(text(32, { min: 1 }).regex(/^[^,]+$/, 'One code per entry, without commas.'))
    .max(20, 'List at most 20 codes.')
    .refine((codes) => new Set(codes.map((c) => c.toUpperCase())).size === codes.length, 'A code is listed twice.'),
});
export type AbnormalCodesInput = z.infer<typeof abnormalCodesSchema>;

/** A test code in a path (as instruments print it). */
export const analyteCodeParam = text(64, { min: 1, minMessage: 'Name the test.' });

export const protocolSchema = z.object({
  name: text(120, { min: 2 }),
  stages: z
    .array(
      z.object({
        key: text(32, { min: 1 }).regex(/^[a-z0-9-]+$/, 'Use lower-case letters, digits and dashes.'),
        label: text(80, { min: 1 }),
        seconds: z.number().int().min(0).max(24 * 3600),
        maxSeconds: z.number().int().min(0).max(24 * 3600).nullable().optional(),
        handsOn: z.boolean().optional(),
      }),
    )
    .min(1, 'A protocol has at least one stage.')
    .max(20)
    .refine((stages) => new Set(stages.map((s) => s.key)).size === stages.length, 'Stage keys must differ.')
    .refine((stages) => stages.some((s) => s.seconds > 0), 'The stages must take some time.'),
  earlySeconds: z.number().int().min(0).max(3600),
  lateSeconds: z.number().int().min(0).max(24 * 3600),
  source: text(1000, { min: 3, minMessage: 'Say where the timings come from.' }),
});
export type ProtocolInput = z.infer<typeof protocolSchema>;

export const mailQuery = z.object({ status: z.enum(['queued', 'sent', 'failed']).optional() });
