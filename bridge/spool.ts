import { randomUUID } from 'node:crypto';
import { EventEmitter } from 'node:events';
import { mkdir, open, readFile, type FileHandle } from 'node:fs/promises';
import { join } from 'node:path';
import { z } from 'zod';
import { bridgeRecordSchema, type BridgeRecord, type ParserOutput } from '../lib/validation/readings';
import { appendDurably, syncDirectory, writeFileAtomically } from './durable-files';
import { isoWithOffset } from './local-time';
import { errorMessage, silentLog, type Log } from './log';
import { lockStore, tightenPermissions } from '../lib/store-lock';

export const SPOOL_FILE = 'spool.jsonl';
export const ACK_FILE = 'ack.json';
export const CORRUPT_FILE = 'spool.corrupt';
export const REJECTED_FILE = 'rejected.jsonl';

// The ack pointer names the last record (in spool order) that the server confirmed, together with all
// before it. A key, not an offset or a sequence number: keys are never reused, so a pointer left over
// from before a compaction can never match a later record.
const ackPointerSchema = z.object({ confirmedThrough: z.string().nullable() });

export interface RejectionDetail {
  status: number;
  error: unknown;
}

interface SpoolEvents {
  appended: [BridgeRecord];
}

/**
 * Append-only JSON-lines spool. A record counts as captured once its line is fsynced; it stays
 * pending until the server confirms its key. Records confirmed out of order are remembered in
 * memory only: after a restart they are sent again and come back as duplicates, which is harmless.
 */
export class Spool extends EventEmitter<SpoolEvents> {
  private queue: Promise<unknown> = Promise.resolve();
  private readonly confirmedAhead = new Set<string>();
  private closed = false;

  private constructor(
    readonly dir: string,
    private readonly file: FileHandle,
    private size: number,
    /** Records after the ack pointer, in spool order. */
    private entries: BridgeRecord[],
    private readonly log: Log,
    private readonly unlock: () => void,
  ) {
    super();
  }

  /**
   * Opens (or creates, owner-only) the spool in dir. One process per spool: a second bridge on the same
   * directory gets a StoreLockedError naming the first one's pid.
   */
  static async open(dir: string, options: { log?: Log } = {}): Promise<Spool> {
    const log = options.log ?? silentLog;
    await mkdir(dir, { recursive: true, mode: 0o700 });
    const unlock = lockStore(dir, 'a Benchwire bridge');
    try {
      tightenPermissions(dir);
      const path = join(dir, SPOOL_FILE);
      const { records, goodBytes, keptAll, existed } = await readSpoolFile(dir, log);
      const file = await open(path, 'a', 0o600);
      if (!existed) await syncDirectory(dir);
      if (!keptAll) {
        await file.truncate(goodBytes);
        await file.sync();
      }
      const confirmedThrough = await readAckPointer(dir, log);
      const at = confirmedThrough === null ? -1 : records.findIndex((record) => record.key === confirmedThrough);
      return new Spool(dir, file, goodBytes, records.slice(at + 1), log, unlock);
    } catch (error) {
      unlock();
      throw error;
    }
  }

  /** Spool one parser output; resolves once it is on disk. */
  append(instrument: string, payload: ParserOutput, receivedAt: Date = new Date()): Promise<BridgeRecord> {
    return this.serially(async () => {
      this.assertOpen();
      const record = bridgeRecordSchema.parse({ key: randomUUID(), instrument, receivedAt: isoWithOffset(receivedAt), payload });
      const line = Buffer.from(`${JSON.stringify(record)}\n`);
      try {
        await this.file.appendFile(line);
        await this.file.sync();
      } catch (error) {
        // Cut off a half-written line so the next append does not glue onto it.
        await this.file.truncate(this.size).catch(() => {});
        throw error;
      }
      this.size += line.length;
      this.entries.push(record);
      this.emit('appended', record);
      return record;
    });
  }

  /** Unconfirmed records, oldest first. */
  pending(limit = Number.POSITIVE_INFINITY): BridgeRecord[] {
    const out: BridgeRecord[] = [];
    for (const record of this.entries) {
      if (out.length >= limit) break;
      if (!this.confirmedAhead.has(record.key)) out.push(record);
    }
    return out;
  }

  depth(): number {
    return this.entries.length - this.confirmedAhead.size;
  }

  /** Mark keys the server confirmed; unknown keys are ignored. Resolves with how many were newly confirmed. */
  ack(keys: Iterable<string>): Promise<number> {
    return this.serially(() => this.confirm(new Set(keys)));
  }

  /** Keep records the server refused in rejected.jsonl for a person to look at, then stop sending them. */
  reject(records: readonly BridgeRecord[], detail: RejectionDetail): Promise<void> {
    return this.serially(async () => {
      this.assertOpen();
      const rejectedAt = isoWithOffset(new Date());
      const lines = records.map((record) => `${JSON.stringify({ rejectedAt, status: detail.status, error: detail.error, record })}\n`);
      await appendDurably(join(this.dir, REJECTED_FILE), lines.join(''));
      await this.confirm(new Set(records.map((record) => record.key)));
    });
  }

  async close(): Promise<void> {
    await this.serially(async () => {
      if (this.closed) return;
      this.closed = true;
      try {
        await this.file.close();
      } finally {
        this.unlock();
      }
    });
  }

  private async confirm(keys: Set<string>): Promise<number> {
    this.assertOpen();
    let newly = 0;
    for (const record of this.entries) {
      if (keys.has(record.key) && !this.confirmedAhead.has(record.key)) {
        this.confirmedAhead.add(record.key);
        newly++;
      }
    }
    let through: string | null = null;
    let advanced = 0;
    while (advanced < this.entries.length && this.confirmedAhead.has(this.entries[advanced].key)) {
      through = this.entries[advanced].key;
      this.confirmedAhead.delete(through);
      advanced++;
    }
    if (advanced === 0) return newly;
    this.entries = this.entries.slice(advanced);
    if (this.entries.length === 0) {
      // Everything confirmed: compact. Truncate first; a crash before the pointer is rewritten leaves
      // a pointer to a key that no longer exists, which reads as "nothing confirmed" of nothing.
      await this.file.truncate(0);
      await this.file.sync();
      this.size = 0;
      await writeAckPointer(this.dir, null);
    } else {
      await writeAckPointer(this.dir, through);
    }
    return newly;
  }

  private serially<T>(task: () => Promise<T>): Promise<T> {
    const run = this.queue.then(task);
    this.queue = run.catch(() => {});
    return run;
  }

  private assertOpen(): void {
    if (this.closed) throw new Error(`spool ${this.dir} is closed`);
  }
}

/**
 * Read all complete, valid records. Lines that are not (a torn last line after a crash, or damage)
 * are copied to spool.corrupt byte for byte, then left out of the spool.
 */
async function readSpoolFile(
  dir: string,
  log: Log,
): Promise<{ records: BridgeRecord[]; goodBytes: number; keptAll: boolean; existed: boolean }> {
  const path = join(dir, SPOOL_FILE);
  let existed = true;
  const bytes = await readFile(path).catch((error: NodeJS.ErrnoException) => {
    if (error.code !== 'ENOENT') throw error;
    existed = false;
    return Buffer.alloc(0);
  });
  const records: BridgeRecord[] = [];
  const good: Buffer[] = [];
  const bad: Buffer[] = [];
  let onlyTailBad = true;
  let start = 0;
  while (start < bytes.length) {
    const newline = bytes.indexOf(0x0a, start);
    const end = newline === -1 ? bytes.length : newline + 1;
    const line = bytes.subarray(start, end);
    const record = newline === -1 ? undefined : parseSpoolLine(line);
    if (record) {
      if (bad.length > 0) onlyTailBad = false;
      records.push(record);
      good.push(line);
    } else {
      bad.push(line);
    }
    start = end;
  }
  const goodBytes = good.reduce((sum, line) => sum + line.length, 0);
  if (bad.length === 0) return { records, goodBytes, keptAll: true, existed };
  const kept = bad.map((line) => (line[line.length - 1] === 0x0a ? line : Buffer.concat([line, Buffer.from('\n')])));
  await appendDurably(join(dir, CORRUPT_FILE), Buffer.concat(kept));
  log.warn(`spool: moved ${bad.length} damaged line(s) to ${join(dir, CORRUPT_FILE)}`);
  if (!onlyTailBad) {
    // Damage before good lines: rewrite without it (a torn tail is simply truncated by the caller).
    await writeFileAtomically(path, Buffer.concat(good));
    return { records, goodBytes, keptAll: true, existed };
  }
  return { records, goodBytes, keptAll: false, existed };
}

function parseSpoolLine(line: Buffer): BridgeRecord | undefined {
  try {
    const parsed = bridgeRecordSchema.safeParse(JSON.parse(line.toString('utf8')));
    return parsed.success ? parsed.data : undefined;
  } catch {
    return undefined;
  }
}

async function readAckPointer(dir: string, log: Log): Promise<string | null> {
  let text: string;
  try {
    text = await readFile(join(dir, ACK_FILE), 'utf8');
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code === 'ENOENT') return null;
    throw error;
  }
  try {
    return ackPointerSchema.parse(JSON.parse(text)).confirmedThrough;
  } catch (error) {
    // Sending everything again is safe: the server answers 'duplicate' for keys it already has.
    log.warn(`spool: ack pointer unreadable (${errorMessage(error)}); all spooled records will be sent again`);
    return null;
  }
}

function writeAckPointer(dir: string, confirmedThrough: string | null): Promise<void> {
  return writeFileAtomically(join(dir, ACK_FILE), `${JSON.stringify({ confirmedThrough })}\n`);
}
