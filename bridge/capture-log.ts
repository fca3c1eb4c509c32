import { mkdir, open, rename, stat, type FileHandle } from 'node:fs/promises';
import { join } from 'node:path';
import { syncDirectory } from './durable-files';
import { errorMessage, silentLog, type Log } from './log';

export interface CaptureLogOptions {
  /** Rotate when the current file would grow past this. */
  maxBytes?: number;
  /** Files kept (at least 2), the current one included: capture.log, capture.1.log … */
  files?: number;
  /** fsync this often while there is something unsynced. */
  syncMs?: number;
  log?: Log;
  name?: string;
}

export const CAPTURE_FILE = 'capture.log';

/**
 * Every byte an instrument sent, before any framing, appended in arrival order to capture.log in the
 * instrument's own folder; rotated by size (capture.1.log is the newest old one) and fsynced on a timer.
 * The files hold the bytes exactly as received (`cat -v` or a hex viewer shows them). A disk problem
 * is logged, counted (problem(), shown as a link-health warning) and never stops the instrument's
 * pipeline: the spool is the record that counts.
 */
export class CaptureLog {
  private queue: Promise<void> = Promise.resolve();
  private file: FileHandle | undefined;
  private size = 0;
  private dirty = false;
  private failing = false;
  private closed = false;
  private lostBytes = 0;
  private lostChunks = 0;
  private lastError: string | undefined;
  private readonly timer: NodeJS.Timeout;
  private readonly maxBytes: number;
  private readonly files: number;
  private readonly log: Log;
  private readonly name: string;

  constructor(
    readonly dir: string,
    options: CaptureLogOptions = {},
  ) {
    this.maxBytes = options.maxBytes ?? 10 * 1024 * 1024;
    this.files = Math.max(2, options.files ?? 5);
    this.log = options.log ?? silentLog;
    this.name = options.name ?? dir;
    this.timer = setInterval(() => void this.sync(), options.syncMs ?? 1_000);
    this.timer.unref();
  }

  get path(): string {
    return join(this.dir, CAPTURE_FILE);
  }

  /** Queue bytes; resolves once written (not yet fsynced). Never rejects. */
  append(bytes: Buffer): Promise<void> {
    if (this.closed || bytes.length === 0) return this.queue;
    const copy = Buffer.from(bytes);
    return this.serially(async () => {
      await this.ensureOpen();
      if (this.size > 0 && this.size + copy.length > this.maxBytes) await this.rotate();
      await this.file?.appendFile(copy);
      this.size += copy.length;
      this.dirty = true;
    }, copy.length);
  }

  /**
   * What could not be logged since this log was opened, for the link-health heartbeat: a disk that is
   * full (ENOSPC) or failing (EIO) must show on the admin's health panel, with the size of the gap.
   */
  problem(): { writing: boolean; lostBytes: number; lostChunks: number; lastError: string } | undefined {
    if (!this.failing && this.lostBytes === 0) return undefined;
    return { writing: !this.failing, lostBytes: this.lostBytes, lostChunks: this.lostChunks, lastError: this.lastError ?? 'unknown error' };
  }

  /** Flush what is written to disk. */
  sync(): Promise<void> {
    return this.serially(async () => {
      if (!this.dirty || !this.file) return;
      this.dirty = false;
      await this.file.sync();
    });
  }

  async close(): Promise<void> {
    clearInterval(this.timer);
    await this.sync();
    this.closed = true;
    await this.serially(async () => {
      await this.file?.close();
      this.file = undefined;
    });
  }

  private async ensureOpen(): Promise<void> {
    if (this.file) return;
    await mkdir(this.dir, { recursive: true });
    this.size = await stat(this.path).then(
      (s) => s.size,
      () => 0,
    );
    this.file = await open(this.path, 'a');
    if (this.size === 0) await syncDirectory(this.dir);
  }

  private async rotate(): Promise<void> {
    await this.file?.sync();
    await this.file?.close();
    this.file = undefined;
    // The oldest is overwritten by the rename below it.
    for (let n = this.files - 1; n >= 1; n--) {
      const from = n === 1 ? this.path : join(this.dir, `capture.${n - 1}.log`);
      await rename(from, join(this.dir, `capture.${n}.log`)).catch((error: NodeJS.ErrnoException) => {
        if (error.code !== 'ENOENT') throw error;
      });
    }
    await this.ensureOpen();
  }

  /** Runs tasks one at a time; `bytes` is how much is lost if this one fails (0: a sync or close). */
  private serially(task: () => Promise<void>, bytes = 0): Promise<void> {
    const run = this.queue.then(task).then(
      () => {
        // Only bytes written show the disk is back; a sync or close with nothing open says nothing.
        if (bytes === 0) return;
        if (this.failing) this.log.info(`${this.name}: raw capture log is being written again`);
        this.failing = false;
      },
      (error) => {
        // Log once per failure streak; the handle may be broken, so reopen next time.
        if (!this.failing) this.log.error(`${this.name}: cannot write the raw capture log ${this.path} (${errorMessage(error)})`);
        this.failing = true;
        this.lastError = (error as NodeJS.ErrnoException)?.code ?? errorMessage(error);
        if (bytes > 0) {
          this.lostBytes += bytes;
          this.lostChunks++;
        }
        const broken = this.file;
        this.file = undefined;
        void broken?.close().catch(() => {});
      },
    );
    this.queue = run;
    return run;
  }
}
