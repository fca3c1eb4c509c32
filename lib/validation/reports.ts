import { z } from 'zod';
import { emailAddress } from './api';

// Result reports: which visit, and who receives it.

const visitDate = z.iso.date('Give the visit as a date (YYYY-MM-DD).');

export const reportQuery = z.object({ visit: visitDate.optional() });

export const sendReportSchema = z
  .object({
    visitDate: visitDate,
    recipientKind: z.enum(['owner', 'referring-vet'], 'Choose who receives the report.'),
    /** Optional for the owner when an owner e-mail is on record. */
    recipientEmail: emailAddress.optional(),
    recipientName: z.string().trim().max(200).optional().transform((v) => v || undefined),
    message: z.string().trim().max(2000).optional().transform((v) => v || undefined),
  })
  .refine((v) => v.recipientKind === 'owner' || v.recipientEmail, { message: 'Give the referring veterinarian’s e-mail address.', path: ['recipientEmail'] });
export type SendReportInput = z.infer<typeof sendReportSchema>;

/** Results export: a date range (clinic days, inclusive), a patient, or both. */
export const exportQuery = z
  .object({
    from: visitDate.optional(),
    to: visitDate.optional(),
    patientId: z.uuid('Not a valid patient id.').optional(),
  })
  .refine((v) => v.patientId || (v.from && v.to), { message: 'Choose a patient or a date range (from and to).', path: ['from'] })
  .refine((v) => !v.from || !v.to || v.from <= v.to, { message: 'The range ends before it starts.', path: ['to'] });
export type ExportQuery = z.infer<typeof exportQuery>;

/** The fields beside the file in a capture-file upload (multipart/form-data). */
export const captureImportForm = z.object({
  step: z.enum(['preview', 'confirm'], 'Say whether to preview or to import.'),
  instrumentId: z.uuid('Choose the instrument the capture was recorded from.'),
});

/** The form fields that come with a patient CSV upload (multipart/form-data). */
export const patientImportForm = z.object({
  step: z.enum(['preview', 'confirm'], 'Say whether to preview or to import.'),
  duplicates: z.enum(['update', 'skip'], 'Choose what to do with record numbers already in Benchwire.'),
  dateFormat: z.enum(['YYYY-MM-DD', 'DD/MM/YYYY', 'MM/DD/YYYY']).default('YYYY-MM-DD'),
  mapping: z
    .string()
    .optional()
    .transform((s, ctx) => {
      if (!s) return undefined;
      try {
        return z.record(z.string(), z.number().int().min(0).nullable()).parse(JSON.parse(s));
      } catch {
        ctx.addIssue({ code: 'custom', message: 'The column mapping is not valid.' });
        return z.NEVER;
      }
    }),
  skipInvalid: z.enum(['true', 'false']).default('false'),
});
