import 'server-only';
import fs from 'node:fs';
import path from 'node:path';
import { simpleParser, type AddressObject } from 'mailparser';
import { ApiError } from '@/lib/http';

// Demo only: what the local mail sink (scripts/mail-sink.ts) received, read from its folder with
// mailparser. Present only when MAIL_SINK_DIR is set (npm start sets it); a real install has no Outbox.

export const outboxDir = (): string | null => process.env.MAIL_SINK_DIR?.trim() || null;

const FILE = /^[A-Za-z0-9._-]+\.eml$/;

function requireOutbox(): string {
  const dir = outboxDir();
  if (!dir) throw new ApiError(404, 'no_outbox', 'The Outbox exists only in the demo (with the local mail sink).');
  return dir;
}

function fileFor(id: string): string {
  if (!FILE.test(id)) throw new ApiError(400, 'invalid_id', 'Not a message id from the Outbox.');
  const file = path.join(/*turbopackIgnore: true*/ requireOutbox(), id);
  if (!fs.existsSync(file)) throw new ApiError(404, 'not_found', 'That message is not in the Outbox.');
  return file;
}

const addresses = (a: AddressObject | AddressObject[] | undefined) =>
  (Array.isArray(a) ? a : a ? [a] : []).flatMap((x) => x.value.map((v) => v.address ?? v.name)).filter(Boolean) as string[];

async function parse(file: string) {
  const mail = await simpleParser(fs.readFileSync(file));
  return {
    id: path.basename(file),
    subject: mail.subject ?? '(no subject)',
    from: addresses(mail.from),
    to: addresses(mail.to),
    date: mail.date?.toISOString() ?? null,
    attachments: mail.attachments.map((a, index) => ({ index, filename: a.filename ?? `attachment-${index + 1}`, contentType: a.contentType, size: a.size })),
    mail,
  };
}

/** The newest messages first (at most 100). */
export async function listOutbox() {
  const dir = requireOutbox();
  if (!fs.existsSync(dir)) return [];
  const files = fs.readdirSync(dir).filter((f) => FILE.test(f)).sort().reverse().slice(0, 100);
  const parsed = await Promise.all(files.map((f) => parse(path.join(/*turbopackIgnore: true*/ dir, f))));
  return parsed.map((p) => ({ id: p.id, subject: p.subject, from: p.from, to: p.to, date: p.date, attachments: p.attachments }));
}

export async function outboxMessage(id: string) {
  const { mail, ...rest } = await parse(fileFor(id));
  return { ...rest, html: typeof mail.html === 'string' ? mail.html : null, text: mail.text ?? '' };
}

export async function outboxAttachment(id: string, index: number) {
  const { mail } = await parse(fileFor(id));
  const attachment = mail.attachments[index];
  if (!attachment) throw new ApiError(404, 'not_found', 'That attachment is not in the message.');
  return { filename: attachment.filename ?? `attachment-${index + 1}`, contentType: attachment.contentType, content: attachment.content };
}
