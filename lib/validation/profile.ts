import { z } from 'zod';
import { text } from './text';

// A printout profile: how to read one text-printing analyzer, as data an admin edits in the browser.
// Shared by the server (validate, store, preview) and the bridge (run). Plain zod, no server imports.

/** Names a field pattern may capture; everything else in a pattern is only for matching. */
export const PROFILE_CAPTURES = [
  'analyte',
  'value',
  'comparator',
  'unit',
  'sampleId',
  'patientRef',
  'date',
  'time',
  'instrumentSerial',
  'flag',
] as const;
export type ProfileCapture = (typeof PROFILE_CAPTURES)[number];

export const DATE_FORMATS = ['YYYY-MM-DD', 'DD.MM.YYYY', 'DD/MM/YYYY', 'MM/DD/YYYY', 'DD-MM-YYYY', 'DD.MM.YY', 'YY/MM/DD'] as const;
export const TIME_FORMATS = ['HH:mm', 'HH:mm:ss', 'hh:mm a', 'hh:mm:ss a'] as const;

/** Named groups a pattern defines, in order ((?<name>…) and RE2's (?P<name>…)). */
export function namedGroupsOf(source: string): string[] {
  return [...source.matchAll(/\(\?P?<([A-Za-z_$][\w$]*)>/g)].map((m) => m[1]);
}
const namedGroups = namedGroupsOf;

/**
 * A regular expression tested against one line without its line ending. It runs in a linear-time
 * engine (lib/validation/pattern.ts, RE2 syntax), so backreferences and lookaround are refused here.
 */
const pattern = z
  .string()
  .min(1, 'Enter a pattern.')
  .max(500)
  .superRefine(async (source, ctx) => {
    // The engine (about 45 kB gzipped) loads when a pattern is checked, not with the editor's page,
    // so these schemas are parsed asynchronously (parseAsync, zodResolver, readJson).
    const { compileLinePattern } = await import('./pattern');
    const compiled = compileLinePattern(source);
    if (!compiled.ok) ctx.addIssue({ code: 'custom', message: `Not a valid pattern: ${compiled.reason}` });
  });

export const profileFieldSchema = z
  .object({
    /** What this line is, in the clinic's words (shown in the preview). */
    label: text(60, { min: 1, minMessage: 'Name the line.' }),
    pattern,
    /** A record without a matching line is unparsed. */
    required: z.boolean().default(false),
    /** Each matching line is its own result (a panel printout: one line per test). */
    repeats: z.boolean().default(false),
  })
  .superRefine((field, ctx) => {
    const unknown = namedGroups(field.pattern).filter((g) => !(PROFILE_CAPTURES as readonly string[]).includes(g));
    if (unknown.length) {
      ctx.addIssue({
        code: 'custom',
        path: ['pattern'],
        message: `Unknown capture name${unknown.length > 1 ? 's' : ''} ${unknown.map((u) => `"${u}"`).join(', ')}: use ${PROFILE_CAPTURES.join(', ')}.`,
      });
    }
    if (field.repeats && !namedGroups(field.pattern).includes('value')) {
      ctx.addIssue({ code: 'custom', path: ['repeats'], message: 'A repeating line must capture a value.' });
    }
  });

/** The one name a control line may capture: the control level as printed ("2", "HIGH"). */
export const CONTROL_CAPTURES = ['level'] as const;

/**
 * How a slip says it is a control run, for readers that print no sample ID: a line such as
 * "QC LEVEL 2". Every result of a slip with such a line is QC (status control, never a patient result);
 * (?<level>…) picks the clinic's control material of that level.
 */
export const profileControlSchema = z
  .object({
    pattern,
  })
  .superRefine((control, ctx) => {
    const unknown = namedGroups(control.pattern).filter((g) => !(CONTROL_CAPTURES as readonly string[]).includes(g));
    if (unknown.length) {
      ctx.addIssue({
        code: 'custom',
        path: ['pattern'],
        message: `A control line may capture only (?<level>…), not ${unknown.map((u) => `"${u}"`).join(', ')}.`,
      });
    }
  });

export const profileDefinitionSchema = z
  .object({
    /** Which analyzer prints this (free text for people). */
    analyzer: text(120, { min: 1, minMessage: 'Say which analyzer prints this.' }),
    encoding: z.enum(['utf8', 'latin1']).default('utf8'),
    record: z
      .object({
        start: pattern.optional(),
        end: pattern.optional(),
        /** A form feed (0x0C) ends the record: printers eject the page after each result. */
        formFeed: z.boolean().default(false),
        /** The line going quiet for this long ends the record. */
        idleMs: z.number().int().min(200).max(600_000).optional(),
        maxLines: z.number().int().min(1).max(500).default(60),
      })
      .refine((r) => r.end || r.formFeed || r.idleMs || r.start, {
        message: 'Say how a record is told apart: a start pattern, an end pattern, a form feed or an idle gap.',
      }),
    fields: z.array(profileFieldSchema).min(1, 'Add at least one line to read.').max(40),
    /** The line that marks a slip as a control run (optional). */
    control: profileControlSchema.optional(),
    /** The test, when the printout does not name it (single-test readers). */
    analyte: text(64, { min: 1 }).optional(),
    /** The unit, when the printout does not print it. */
    unit: text(32, { min: 1 }).optional(),
    decimalComma: z.boolean().default(false),
    dateFormat: z.enum(DATE_FORMATS).default('YYYY-MM-DD'),
    timeFormat: z.enum(TIME_FORMATS).default('HH:mm'),
  })
  .superRefine((profile, ctx) => {
    const captured = new Set(profile.fields.flatMap((f) => namedGroups(f.pattern)));
    if (!captured.has('value')) {
      ctx.addIssue({ code: 'custom', path: ['fields'], message: 'No line captures a value: add (?<value>…) to one pattern.' });
    }
    if (!captured.has('analyte') && !profile.analyte) {
      ctx.addIssue({
        code: 'custom',
        path: ['analyte'],
        message: 'Name the test here, or capture (?<analyte>…) from the printout.',
      });
    }
  });

export type ProfileDefinition = z.infer<typeof profileDefinitionSchema>;
export type ProfileDefinitionInput = z.input<typeof profileDefinitionSchema>;

/** An administrator's save of a profile (name and definition), from the editor and its API. */
export const saveProfileSchema = z.object({
  name: text(120, { min: 2, minMessage: 'Name the profile.' }),
  definition: profileDefinitionSchema,
});

export const previewProfileSchema = z.object({
  definition: profileDefinitionSchema,
  sample: z.string().max(256 * 1024, 'Paste at most 256 KB of printout.'),
});
