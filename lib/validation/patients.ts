import { z } from 'zod';
import { PATIENT_SEXES, SPECIES } from '@/db/vocabulary';

// Patient and owner shapes shared by the New patient / Edit forms and the route handlers, so a field
// error reads the same in the browser and in a 400 from the API.

/** A form's empty input means "not given". */
const blank = (v: unknown) => (typeof v === 'string' && v.trim() === '') || v === null ? undefined : v;

const optionalText = (max: number, message?: string) =>
  z.preprocess(blank, z.string().trim().max(max, message ?? `Use at most ${max} characters.`).optional());

const isoDate = /^\d{4}-\d{2}-\d{2}$/;
const todayIso = () => new Date().toISOString().slice(0, 10);

/** A calendar date (YYYY-MM-DD) that really exists and is not in the future. */
const pastDate = (what: string) =>
  z.preprocess(
    blank,
    z
      .string()
      .regex(isoDate, `Enter the ${what} as a date (YYYY-MM-DD).`)
      .refine((v) => !Number.isNaN(Date.parse(`${v}T00:00:00Z`)) && new Date(`${v}T00:00:00Z`).toISOString().startsWith(v), {
        message: `Enter a real calendar date for the ${what}.`,
      })
      .refine((v) => v <= todayIso(), { message: `The ${what} cannot be in the future.` })
      .optional(),
  );

/** A number from a text input ("" is not given; "abc" is an error, never 0). */
const optionalNumber = <S extends z.ZodType<number>>(schema: S) =>
  z.preprocess((v) => {
    const b = blank(v);
    return typeof b === 'string' ? Number(b.trim().replace(',', '.')) : b;
  }, schema.optional());

export const RECORD_NUMBER_HINT = 'Letters, digits, dashes, dots or slashes, as on the clinic’s own records.';

export const patientInputSchema = z
  .object({
    recordNumber: z
      .string({ message: 'Enter the record number.' })
      .trim()
      .min(1, 'Enter the record number.')
      .max(40, 'Use at most 40 characters.')
      .regex(/^[A-Za-z0-9][A-Za-z0-9./-]*$/, RECORD_NUMBER_HINT),
    name: z.string({ message: 'Enter the patient’s name.' }).trim().min(1, 'Enter the patient’s name.').max(80, 'Use at most 80 characters.'),
    species: z.enum(SPECIES, { message: 'Choose the species.' }),
    breed: optionalText(80),
    sex: z.enum(PATIENT_SEXES, { message: 'Choose the sex and neuter status.' }).default('unknown'),
    /** Known date of birth, or… */
    dateOfBirth: pastDate('date of birth'),
    /** …an estimated age today (years and months), turned into an estimated date of birth. */
    ageYears: optionalNumber(z.number({ message: 'Enter the years as a number.' }).int('Whole years only.').min(0, 'Cannot be negative.').max(60, 'At most 60 years.')),
    ageMonths: optionalNumber(z.number({ message: 'Enter the months as a number.' }).int('Whole months only.').min(0, 'Cannot be negative.').max(11, 'Use 0–11 months (add years).')),
    weightKg: optionalNumber(
      z.number({ message: 'Enter the weight in kilograms.' }).positive('The weight must be more than 0 kg.').max(150, 'At most 150 kg: check the unit (kg).'),
    ),
    weightMeasuredOn: pastDate('weighing date'),
    /** An owner already on file, or a new owner from the fields below. */
    ownerId: z.preprocess(blank, z.uuid('Choose an owner from the list.').optional()),
    ownerName: optionalText(120),
    ownerPhone: z.preprocess(
      blank,
      z
        .string()
        .trim()
        .max(40, 'Use at most 40 characters.')
        .regex(/^[+0-9 ()./-]{3,}$/, 'Enter a phone number (digits, spaces, + ( ) - . /).')
        .optional(),
    ),
    ownerEmail: z.preprocess(blank, z.string().trim().toLowerCase().max(200).pipe(z.email('Enter a valid e-mail address.')).optional()),
    attendingVetId: z.preprocess(blank, z.uuid('Choose the attending veterinarian from the list.').optional()),
  })
  .superRefine((v, ctx) => {
    const hasAge = v.ageYears !== undefined || v.ageMonths !== undefined;
    if (v.dateOfBirth && hasAge) {
      ctx.addIssue({ code: 'custom', path: ['dateOfBirth'], message: 'Give the date of birth or an estimated age, not both.' });
    }
    if (hasAge && (v.ageYears ?? 0) === 0 && (v.ageMonths ?? 0) === 0) {
      ctx.addIssue({ code: 'custom', path: ['ageMonths'], message: 'An estimated age needs at least one month.' });
    }
    if (v.weightMeasuredOn && v.weightKg === undefined) {
      ctx.addIssue({ code: 'custom', path: ['weightKg'], message: 'Enter the weight taken on that date.' });
    }
    if (v.ownerId && (v.ownerName || v.ownerPhone || v.ownerEmail)) {
      ctx.addIssue({ code: 'custom', path: ['ownerName'], message: 'Either choose an owner on file or enter a new one, not both.' });
    }
    if (!v.ownerId && !v.ownerName && (v.ownerPhone || v.ownerEmail)) {
      ctx.addIssue({ code: 'custom', path: ['ownerName'], message: 'Enter the owner’s name with the contact details.' });
    }
  });

export type PatientInput = z.output<typeof patientInputSchema>;
export type PatientFormValues = z.input<typeof patientInputSchema>;

/** Estimated date of birth for an age given in years and months on a day (UTC calendar). */
export function dateOfBirthFromAge(years: number, months: number, today = new Date()): string {
  const d = new Date(Date.UTC(today.getUTCFullYear(), today.getUTCMonth(), 1));
  d.setUTCMonth(d.getUTCMonth() - (years * 12 + months));
  // Keep the day of the month, clamped to the month's length (an estimate, but a real date).
  const lastDay = new Date(Date.UTC(d.getUTCFullYear(), d.getUTCMonth() + 1, 0)).getUTCDate();
  d.setUTCDate(Math.min(today.getUTCDate(), lastDay));
  return d.toISOString().slice(0, 10);
}

export const PATIENT_STATUSES = ['active', 'deceased', 'archived'] as const;

export const patientStatusSchema = z
  .object({
    status: z.enum(PATIENT_STATUSES, { message: 'Choose active, deceased or archived.' }),
    deceasedOn: pastDate('date of death'),
    reason: z.string().trim().min(3, 'Say why the record changes status.').max(500),
  })
  .superRefine((v, ctx) => {
    if (v.status !== 'deceased' && v.deceasedOn) {
      ctx.addIssue({ code: 'custom', path: ['deceasedOn'], message: 'A date of death only goes with “deceased”.' });
    }
  });
export type PatientStatusInput = z.output<typeof patientStatusSchema>;

export const mergePatientsSchema = z.object({
  /** The duplicate record: its results, orders and alerts move to the record in the URL, and it is closed as merged. */
  duplicatePatientId: z.uuid('Choose the duplicate record.'),
  reason: z.string().trim().min(3, 'Say why these records are the same animal.').max(500),
});
export type MergePatientsInput = z.output<typeof mergePatientsSchema>;

export const patientListQuery = z.object({
  q: z.string().trim().max(100).default(''),
  limit: z.coerce.number().int().min(1).max(200).default(50),
  species: z.enum(SPECIES).optional(),
  /** 'open' (default): active records only. */
  status: z.enum(['open', 'all', 'active', 'deceased', 'archived', 'merged']).default('open'),
});

export const ownerSearchQuery = z.object({ q: z.string().trim().min(1).max(100) });
