import 'server-only';
import { createHash } from 'node:crypto';
import { Readable, Writable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { and, desc, eq, inArray, sql } from 'drizzle-orm';
import { PROFILE_DIALECT, findDialect, type Dialect } from '@/bridge/dialects';
import { loadProfile, profileDialect } from '@/bridge/dialects/profile';
import { createParsingStages } from '@/bridge/parse-stage';
import { getDatabase, type Executor } from '@/db/client';
import { captureImports, instruments, printoutProfiles, readings, staffUsers, unparsedCaptures } from '@/db/schema';
import { recordAudit } from '@/lib/audit';
import { requirePermission, type Actor } from '@/lib/auth/guards';
import { ApiError, notFound } from '@/lib/http';
import { storable, storeRecords } from '@/lib/readings/ingest';
import type { BridgeRecord, ParserOutput } from '@/lib/validation/readings';

// A raw capture file (bytes recorded from an analyzer's line: the bridge's capture log or another recorder)
// read for one instrument by the bridge's own stages (framer → parser), exactly as `bridge parse` reads a
// file. A preview writes nothing; confirming stores what is not stored yet, in one audited transaction,
// as unassigned readings and unparsed captures: they wait in Intake for a person, like any other.

// One import is one transaction, and on the embedded database that holds every other write (bridge uploads
// included) until it ends: 5000 slips took about 40 s to store on a loaded 2-core machine, so an import
// takes at most 2000 records (a busy analyzer's day or two); a bigger capture is split into files.
export const CAPTURE_IMPORT_LIMITS = { maxBytes: 2 * 1024 * 1024, maxRecords: 2000 } as const;
/** Records per INSERT: the bridge's batch size, which keeps each statement well under PostgreSQL's parameter limit. */
const CHUNK = 200;
const PREVIEW_ITEMS = 500;

export interface CaptureImportRequest {
  instrumentId: string;
  fileName: string;
  bytes: Uint8Array;
}

/** The instrument and how the bridge would read it (its dialect, or its printout profile's latest version). */
async function readerFor(tx: Executor, actor: Actor, instrumentId: string) {
  const [instrument] = await tx
    .select()
    .from(instruments)
    .where(and(eq(instruments.id, instrumentId), eq(instruments.clinicId, actor.clinicId)));
  if (!instrument) throw notFound('The instrument');
  let dialect: Dialect | undefined;
  let profile: { key: string; version: number } | null = null;
  if (instrument.dialect === PROFILE_DIALECT) {
    const [latest] = instrument.profileId
      ? await tx
          .select()
          .from(printoutProfiles)
          .where(and(eq(printoutProfiles.clinicId, actor.clinicId), eq(printoutProfiles.profileKey, instrument.profileId)))
          .orderBy(desc(printoutProfiles.version))
          .limit(1)
      : [];
    if (!latest) throw new ApiError(409, 'no_profile', `${instrument.name} is read by a printout profile, but none is chosen. Choose one in Admin → Instruments first.`, [{ path: 'instrumentId', message: 'No printout profile.' }]);
    const loaded = await loadProfile(latest.definition);
    if (!loaded.ok) throw new ApiError(409, 'profile_invalid', `The printout profile of ${instrument.name} is not valid (${loaded.message}).`, [{ path: 'instrumentId', message: 'Profile not valid.' }]);
    profile = { key: latest.profileKey, version: latest.version };
    dialect = profileDialect(loaded.definition, profile);
  } else {
    dialect = findDialect(instrument.dialect);
  }
  if (!dialect) throw new ApiError(409, 'unknown_dialect', `${instrument.name} is set to read "${instrument.dialect}", which Benchwire cannot read.`, [{ path: 'instrumentId', message: 'Unknown dialect.' }]);
  return { instrument, dialect, profile };
}

/** The bytes through the bridge's parsing stages, as from a file: no idle timers, nobody to answer. */
export async function readCaptureBytes(dialect: Dialect, bytes: Uint8Array, decimalMark: 'point' | 'comma' | undefined): Promise<ParserOutput[]> {
  const outputs: ParserOutput[] = [];
  const collect = new Writable({
    objectMode: true,
    write(output: ParserOutput, _encoding, callback) {
      outputs.push(output);
      callback();
    },
  });
  await pipeline([Readable.from([Buffer.from(bytes)]), ...createParsingStages(dialect, { idle: false, decimalMark }), collect]);
  return outputs;
}

const md5 = (text: string) => createHash('md5').update(text, 'utf8').digest('hex');

/**
 * What is stored already, found by content: the bridge's keys are random, so a reading the bridge sent
 * from the same bytes is the same instrument, test and raw text (for ASTM and HL7 the message's records,
 * for a printout the slip). Counted as a multiset: the n-th copy in the file matches the n-th stored copy,
 * so a genuine second identical slip is not dropped, and importing the same file again adds nothing.
 * Unparsed fragments match on their text alone (a live link and a file may give different reasons).
 */
async function alreadyStored(tx: Executor, clinicId: string, instrumentCode: string, outputs: ParserOutput[]) {
  const contentKey = (o: ParserOutput) => (o.kind === 'reading' ? `r|${o.analyte}|${md5(o.raw)}` : `u|${md5(o.raw)}`);
  const stored = storable(outputs);
  const readingHashes = [...new Set(stored.filter((o) => o.kind === 'reading').map((o) => md5(o.raw)))];
  const captureHashes = [...new Set(stored.filter((o) => o.kind === 'unparsed').map((o) => md5(o.raw)))];
  const remaining = new Map<string, number>();
  const hash = (raw: typeof readings.raw | typeof unparsedCaptures.raw) => sql<string>`md5(${raw})`;
  for (let i = 0; i < readingHashes.length; i += 1000) {
    const rows = await tx
      .select({ analyte: readings.analyte, h: hash(readings.raw), n: sql<number>`count(*)::int` })
      .from(readings)
      .where(and(eq(readings.clinicId, clinicId), eq(readings.instrumentCode, instrumentCode), inArray(hash(readings.raw), readingHashes.slice(i, i + 1000))))
      .groupBy(readings.analyte, hash(readings.raw));
    for (const r of rows) remaining.set(`r|${r.analyte}|${r.h}`, r.n);
  }
  for (let i = 0; i < captureHashes.length; i += 1000) {
    const rows = await tx
      .select({ h: hash(unparsedCaptures.raw), n: sql<number>`count(*)::int` })
      .from(unparsedCaptures)
      .where(and(eq(unparsedCaptures.clinicId, clinicId), eq(unparsedCaptures.instrumentCode, instrumentCode), inArray(hash(unparsedCaptures.raw), captureHashes.slice(i, i + 1000))))
      .groupBy(hash(unparsedCaptures.raw));
    for (const r of rows) remaining.set(`u|${r.h}`, r.n);
  }
  return stored.map((o) => {
    const key = contentKey(o);
    const left = remaining.get(key) ?? 0;
    if (left > 0) remaining.set(key, left - 1);
    return left > 0;
  });
}

async function plan(tx: Executor, actor: Actor, input: CaptureImportRequest) {
  requirePermission(actor, 'manageClinic');
  if (input.bytes.length === 0) throw new ApiError(400, 'empty_file', 'The file is empty.', [{ path: 'file', message: 'Empty.' }]);
  if (input.bytes.length > CAPTURE_IMPORT_LIMITS.maxBytes) {
    throw new ApiError(413, 'file_too_large', `The file is larger than ${CAPTURE_IMPORT_LIMITS.maxBytes / 1024 / 1024} MB; split the capture into smaller files.`, [{ path: 'file', message: 'Too large.' }]);
  }
  const { instrument, dialect, profile } = await readerFor(tx, actor, input.instrumentId);
  const outputs = await readCaptureBytes(dialect, input.bytes, instrument.readSettings?.decimalMark);
  if (outputs.length > CAPTURE_IMPORT_LIMITS.maxRecords) {
    throw new ApiError(413, 'too_many_records', `The file holds ${outputs.length} readings and fragments; at most ${CAPTURE_IMPORT_LIMITS.maxRecords} per import. Split the capture into smaller files.`, [{ path: 'file', message: 'Too many records.' }]);
  }
  if (outputs.length === 0) throw new ApiError(400, 'nothing_read', 'Nothing could be read from the file: it holds no text the instrument sends.', [{ path: 'file', message: 'Nothing to read.' }]);
  const stored = await alreadyStored(tx, actor.clinicId, instrument.code, outputs);
  const sha256 = createHash('sha256').update(input.bytes).digest('hex');
  const earlier = await tx
    .select({ at: captureImports.createdAt, by: staffUsers.displayName, readingsAdded: captureImports.readingsAdded, capturesAdded: captureImports.capturesAdded })
    .from(captureImports)
    .innerJoin(staffUsers, eq(staffUsers.id, captureImports.importedBy))
    .where(and(eq(captureImports.clinicId, actor.clinicId), eq(captureImports.sha256, sha256)))
    .orderBy(desc(captureImports.createdAt))
    .limit(5);
  const count = (kind: ParserOutput['kind'], isStored: boolean) => outputs.filter((o, i) => o.kind === kind && stored[i] === isStored).length;
  return {
    instrument: { id: instrument.id, code: instrument.code, name: instrument.name },
    readWith: profile ? { dialect: PROFILE_DIALECT, profileKey: profile.key, profileVersion: profile.version } : { dialect: dialect.name, profileKey: null, profileVersion: null },
    file: { name: input.fileName, bytes: input.bytes.length, sha256 },
    earlierImports: earlier,
    summary: {
      readingsNew: count('reading', false),
      readingsAlreadyStored: count('reading', true),
      capturesNew: count('unparsed', false),
      capturesAlreadyStored: count('unparsed', true),
    },
    outputs,
    stored,
  };
}

/** What the file holds and what is stored already; writes nothing. */
export async function previewCaptureImport(actor: Actor, input: CaptureImportRequest) {
  const { db } = await getDatabase();
  const { outputs, stored, ...rest } = await plan(db, actor, input);
  const items = outputs.slice(0, PREVIEW_ITEMS).map((o, i) =>
    o.kind === 'reading'
      ? {
          kind: 'reading' as const,
          alreadyStored: stored[i],
          analyte: o.analyte,
          value: o.value,
          comparator: o.comparator,
          decimals: o.decimals ?? null,
          code: o.code,
          text: o.text,
          unit: o.unit,
          flags: o.flags,
          sampleId: o.sampleId,
          patientRef: o.patientRef,
          measuredAt: o.measuredAt,
        }
      : { kind: 'unparsed' as const, alreadyStored: stored[i], reason: o.reason, raw: o.raw.slice(0, 400) },
  );
  return { ...rest, items, itemsShown: items.length, itemsTotal: outputs.length };
}

/**
 * Stores what is not stored yet, in one transaction with the import's own row and audit event; readings go
 * to Intake unassigned (no exact-ID rule: a person places what an import brings). Imports for one
 * instrument take turns, so two uploads of one file cannot both add it.
 */
export async function commitCaptureImport(actor: Actor, input: CaptureImportRequest) {
  const store = await getDatabase();
  const result = await store.db.transaction(async (tx) => {
    await tx.execute(sql`select pg_advisory_xact_lock(hashtext(${`capture-import:${input.instrumentId}`}))`);
    const p = await plan(tx, actor, input);
    const [row] = await tx
      .insert(captureImports)
      .values({
        clinicId: actor.clinicId,
        instrumentId: p.instrument.id,
        instrumentCode: p.instrument.code,
        dialect: p.readWith.dialect,
        profileKey: p.readWith.profileKey,
        profileVersion: p.readWith.profileVersion,
        fileName: input.fileName,
        fileBytes: input.bytes.length,
        sha256: p.file.sha256,
        importedBy: actor.userId,
        readingsAdded: p.summary.readingsNew,
        readingsAlreadyStored: p.summary.readingsAlreadyStored,
        capturesAdded: p.summary.capturesNew,
        capturesAlreadyStored: p.summary.capturesAlreadyStored,
      })
      .returning();
    const receivedAt = new Date().toISOString();
    const fresh: BridgeRecord[] = p.outputs.flatMap((payload, i) =>
      p.stored[i] ? [] : [{ key: `import:${row.id}:${i}`, instrument: p.instrument.code, receivedAt, payload }],
    );
    let readingsAdded = 0;
    let capturesAdded = 0;
    for (let i = 0; i < fresh.length; i += CHUNK) {
      const stored = await storeRecords(tx, { clinicId: actor.clinicId, bridgeId: null, captureImportId: row.id, importedBy: actor.userId }, fresh.slice(i, i + CHUNK));
      readingsAdded += stored.readings.length;
      capturesAdded += stored.captureIds.length;
    }
    // The keys are this import's own, so everything handed over is new; anything else is a bug.
    if (readingsAdded !== p.summary.readingsNew || capturesAdded !== p.summary.capturesNew) throw new Error('capture import: stored counts differ from the plan');
    await recordAudit(tx, {
      clinicId: actor.clinicId,
      actorUserId: actor.userId,
      action: 'capture-import.completed',
      entityType: 'capture_import',
      entityId: row.id,
      details: { instrument: p.instrument.code, fileName: input.fileName, fileBytes: input.bytes.length, sha256: p.file.sha256, ...p.summary, readWith: p.readWith },
    });
    return { id: row.id, instrument: p.instrument, file: p.file, summary: p.summary };
  });
  await store.durable();
  return result;
}

/** The clinic's recent capture imports: who imported which file for which instrument, and what it added. */
export async function listCaptureImports(actor: Actor) {
  requirePermission(actor, 'manageClinic');
  const { db } = await getDatabase();
  return db
    .select({
      id: captureImports.id,
      at: captureImports.createdAt,
      instrumentCode: captureImports.instrumentCode,
      instrumentName: instruments.name,
      fileName: captureImports.fileName,
      fileBytes: captureImports.fileBytes,
      sha256: captureImports.sha256,
      importedBy: staffUsers.displayName,
      readingsAdded: captureImports.readingsAdded,
      readingsAlreadyStored: captureImports.readingsAlreadyStored,
      capturesAdded: captureImports.capturesAdded,
      capturesAlreadyStored: captureImports.capturesAlreadyStored,
    })
    .from(captureImports)
    .innerJoin(staffUsers, eq(staffUsers.id, captureImports.importedBy))
    .innerJoin(instruments, eq(instruments.id, captureImports.instrumentId))
    .where(eq(captureImports.clinicId, actor.clinicId))
    .orderBy(desc(captureImports.createdAt))
    .limit(50);
}
