import { z } from 'zod';
import { isoDateTime } from './text';

// The reading contract shared by the bridge (what it parses and uploads) and the server (what it accepts).
// Plain zod, no server imports: the bridge bundles nothing from the web app but this.

export const COMPARATORS = ['<', '>'] as const;
export const RESULT_STATUSES = ['final', 'preliminary', 'corrected'] as const;

/** A coded result (HL7 CE/CWE OBX-5, an ASTM word such as POS): the sender's code, its text and code system. */
export const codedValueSchema = z.object({
  /** The coding system as sent (HL7 CE/CWE component 3); null for the instrument's own words. */
  system: z.string().trim().max(64).nullable().default(null),
  code: z.string().trim().min(1, 'a coded value needs its code').max(64),
  display: z.string().trim().max(200).nullable().default(null),
});
export type CodedValue = z.infer<typeof codedValueSchema>;

/**
 * A result is exactly one of: a number (with its comparator), a code, or text; plus unit, the
 * instrument's flags and range, status and notes. `value`, `code` and `text`: at most one is set.
 */
export const parsedReadingSchema = z.object({
  kind: z.literal('reading').default('reading'),
  analyte: z.string().trim().min(1, 'analyte is required').max(64),
  value: z.number().finite().nullable(),
  /** Digits after the decimal mark as printed ("5.0" → 1), so the value is shown with the precision it was sent with; null when unknown. */
  decimals: z.number().int().min(0).max(15).nullable().optional(),
  code: codedValueSchema.nullable().default(null),
  /** A text result (HL7 ST/TX/FT), as sent with escapes undone. */
  text: z.string().max(4000).nullable().default(null),
  /** Comments sent with this result (HL7 NTE-3, ASTM C.4), in order. */
  notes: z.array(z.string().max(2000)).max(20).default([]),
  comparator: z.enum(COMPARATORS).nullable().default(null),
  unit: z.string().trim().max(32).nullable().default(null),
  flags: z.array(z.string().trim().min(1).max(32)).max(16).default([]),
  sampleId: z.string().trim().max(64).nullable().default(null),
  patientRef: z.string().trim().max(64).nullable().default(null),
  measuredAt: isoDateTime().nullable().default(null),
  instrumentSerial: z.string().trim().max(64).nullable().default(null),
  /** The reference range as the instrument sent it (ASTM R.6, HL7 OBX-7), for people to compare with ours. */
  referenceRange: z.string().trim().max(64).nullable().default(null),
  /** The instrument's own result status (ASTM R.9, HL7 OBX-11); null when it sends none. */
  resultStatus: z.enum(RESULT_STATUSES).nullable().default(null),
  /** 'control' when the analyzer marks the specimen as QC (ASTM O.12 action code Q, HL7 SPM-11 role Q, a printout profile's control line). */
  specimenRole: z.enum(['patient', 'control']).optional(),
  /** The control level as printed (a printout profile's control line), to pick the control material by. */
  controlLevel: z.string().trim().min(1).max(32).optional(),
  raw: z.string().max(65536),
}).refine((r) => [r.value !== null, r.code !== null, r.text !== null].filter(Boolean).length <= 1, {
  path: ['value'],
  message: 'a result is a number, a code or text, not more than one',
});
export type ParsedReading = z.infer<typeof parsedReadingSchema>;

export const unparsedFragmentSchema = z.object({
  kind: z.literal('unparsed'),
  raw: z.string().max(65536),
  reason: z.string().trim().min(1).max(200),
});
export type UnparsedFragment = z.infer<typeof unparsedFragmentSchema>;

/** What a dialect parser yields: a reading, or bytes it could not turn into one (kept, never dropped). */
export const parserOutputSchema = z.discriminatedUnion('kind', [parsedReadingSchema, unparsedFragmentSchema]);
export type ParserOutput = ParsedReading | UnparsedFragment;

/** One spooled record as the bridge sends it: the idempotency key is fixed when the record is first spooled. */
export const bridgeRecordSchema = z.object({
  key: z
    .string()
    .min(8)
    .max(128)
    .regex(/^[A-Za-z0-9._:-]+$/, 'key may hold letters, digits and . _ : - only'),
  instrument: z.string().trim().min(1).max(64),
  receivedAt: isoDateTime(),
  payload: parserOutputSchema,
});
export type BridgeRecord = z.infer<typeof bridgeRecordSchema>;

export const MAX_BATCH = 200;

export const bridgeBatchSchema = z.object({
  bridgeVersion: z.string().max(32).optional(),
  records: z.array(bridgeRecordSchema).min(1, 'a batch holds at least one record').max(MAX_BATCH),
});
export type BridgeBatch = z.infer<typeof bridgeBatchSchema>;

export const bridgeBatchResultSchema = z.object({
  results: z.array(
    z.object({
      key: z.string(),
      status: z.enum(['created', 'duplicate']),
      id: z.string(),
    }),
  ),
});
export type BridgeBatchResult = z.infer<typeof bridgeBatchResultSchema>;

export const bridgeHeartbeatSchema = z.object({
  bridgeVersion: z.string().max(32).optional(),
  spoolDepth: z.number().int().min(0),
  sources: z
    .array(
      z.object({
        instrument: z.string().max(64),
        state: z.enum(['open', 'connecting', 'closed', 'error']),
        detail: z.string().max(200).optional(),
        /** Link-health warnings for people, e.g. a stream that looks like the wrong baud rate or parity. */
        warnings: z.array(z.string().max(200)).max(10).optional(),
        bytesReceived: z.number().int().min(0).optional(),
        lastByteAt: isoDateTime().optional(),
        /** Frames the instrument had to repeat after a bad checksum, and other broken frames, since the bridge started. */
        checksumRetransmissions: z.number().int().min(0).optional(),
        framingErrors: z.number().int().min(0).optional(),
      }),
    )
    .max(64)
    .default([]),
});
export type BridgeHeartbeat = z.infer<typeof bridgeHeartbeatSchema>;

/**
 * The bridge's worklist: open tests on its instruments, as an analyzer asks its host for (the ASTM E1394 host
 * query, §11 request-information record). Only what labels a sample: the tube label and the record number.
 */
export const bridgeWorklistSchema = z.object({
  items: z.array(
    z.object({
      instrument: z.string(),
      analyte: z.string(),
      sampleId: z.string().nullable(),
      recordNumber: z.string(),
      startedAt: z.iso.datetime({ offset: true }),
      dueAt: z.iso.datetime({ offset: true }),
    }),
  ),
});
export type BridgeWorklist = z.infer<typeof bridgeWorklistSchema>;
export type WorklistItem = BridgeWorklist['items'][number];
