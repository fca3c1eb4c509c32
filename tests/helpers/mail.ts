// The real local SMTP sink (scripts/mail-sink.ts) on a free loopback port, and reading back what it kept
// with mailparser, so e-mail tests check what an SMTP server actually received.
import fs from 'node:fs';
import { freePort } from '@/bridge/testing/server';
import os from 'node:os';
import path from 'node:path';
import { simpleParser, type ParsedMail } from 'mailparser';
import type { SMTPServer } from 'smtp-server';
import { startMailSink } from '@/scripts/mail-sink';

export interface Sink {
  port: number;
  dir: string;
  url: string;
  server: SMTPServer | null;
  start(): Promise<void>;
  stop(): Promise<void>;
  /** Every message the sink kept, parsed, oldest first. */
  messages(): Promise<ParsedMail[]>;
  /** Waits (by polling the sink's folder) until `count` messages are kept. */
  waitForMessages(count: number, timeoutMs?: number): Promise<ParsedMail[]>;
}

export async function mailSink(): Promise<Sink> {
  const port = await freePort();
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'benchwire-mail-'));
  const sink: Sink = {
    port,
    dir,
    url: `smtp://127.0.0.1:${port}`,
    server: null,
    async start() {
      sink.server = await startMailSink({ port, dir });
    },
    async stop() {
      const server = sink.server;
      sink.server = null;
      if (server) await new Promise<void>((resolve) => server.close(() => resolve()));
    },
    async messages() {
      const files = fs.readdirSync(dir).filter((f) => f.endsWith('.eml')).sort();
      return Promise.all(files.map((f) => simpleParser(fs.readFileSync(path.join(dir, f)))));
    },
    async waitForMessages(count, timeoutMs = 10_000) {
      const deadline = Date.now() + timeoutMs;
      for (;;) {
        const files = fs.readdirSync(dir).filter((f) => f.endsWith('.eml'));
        // A message is complete once its file ends with the SMTP body; parse and check the count.
        if (files.length >= count) {
          const parsed = await sink.messages();
          if (parsed.length >= count && parsed.every((m) => m.subject !== undefined)) return parsed;
        }
        if (Date.now() > deadline) throw new Error(`timed out waiting for ${count} message(s) in the mail sink (have ${files.length})`);
        await new Promise((r) => setTimeout(r, 50));
      }
    },
  };
  return sink;
}
