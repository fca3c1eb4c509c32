import fs from 'node:fs';
import { eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { body, ingestOne, patientByRecord } from './support';
import * as assign from '@/app/api/readings/[readingId]/assign/route';
import * as pdfRoute from '@/app/api/patients/[patientId]/report/route';
import * as reportsRoute from '@/app/api/patients/[patientId]/reports/route';
import * as results from '@/app/api/patients/[patientId]/results/route';
import * as reviews from '@/app/api/readings/[readingId]/reviews/route';
import type { Database } from '@/db/client';
import { auditEvents, clinics } from '@/db/schema';
import { deliverDueMail, transportFromEnv } from '@/lib/mail/queue';
import { visitDay } from '@/lib/reports/data';
import { seededDatabase } from '../helpers/db';
import { params, request, signIn } from '../helpers/http';
import { mailSink, type Sink } from '../helpers/mail';
import { readPdf } from '../helpers/pdf';

// Result reports: the PDF of a visit (read back with PDF.js), and a reviewed report sent by e-mail through
// the real local SMTP sink with the PDF attached. Demo data: Biscuit's invented CRP series (seed).
// Canine CRP interval 0–10 mg/L: from memory (Am J Vet Res 1987;48:919–921), verify.

let database: Database;
let clinicId: string;
let c: { vet: string; tech: string };
let biscuit: string;
let sink: Sink;
let timeZone: string;
let bridgeToken: string;

beforeAll(async () => {
  ({ database, clinicId, bridgeToken } = await seededDatabase());
  c = { vet: await signIn('vet@fernhollow.example'), tech: await signIn('tech@fernhollow.example') };
  biscuit = (await patientByRecord(database.db, clinicId, 'FH-1001')).id;
  [{ timeZone }] = await database.db.select({ timeZone: clinics.timeZone }).from(clinics).where(eq(clinics.id, clinicId));
  sink = await mailSink();
  await sink.start();
});
afterAll(async () => {
  await sink.stop();
  fs.rmSync(sink.dir, { recursive: true, force: true });
});

const chart = async () => body(await results.GET(request('/api/patients/x/results', { cookie: c.vet }), params({ patientId: biscuit })));
const latest = async () => (await chart()).results[0] as { id: string; measuredAt: string };
const send = (value: unknown, cookie = c.vet) => reportsRoute.POST(request('/api/patients/x/reports', { cookie, body: value }), params({ patientId: biscuit }));

describe('visit days', () => {
  it('are calendar days in the clinic’s time zone (IANA tz via Intl)', () => {
    // 23:30 UTC on 31 March 2026 is 00:30 on 1 April in London (BST, UTC+1, from 29 March 2026).
    expect(visitDay(new Date('2026-03-31T23:30:00Z'), 'Europe/London')).toBe('2026-04-01');
    expect(visitDay(new Date('2026-03-31T23:30:00Z'), 'UTC')).toBe('2026-03-31');
  });
});

describe('the PDF of a visit', () => {
  it('has the clinic, patient and owner, the result with unit, interval and flag, the trend, the cautions and page numbers', async () => {
    const r = await latest();
    const visit = visitDay(new Date(r.measuredAt), timeZone);
    const response = await pdfRoute.GET(request(`/api/patients/x/report?visit=${visit}`, { cookie: c.tech }), params({ patientId: biscuit }));
    expect(response.status).toBe(200);
    expect(response.headers.get('content-type')).toBe('application/pdf');
    expect(response.headers.get('content-disposition')).toBe(`attachment; filename="results-FH-1001-${visit}.pdf"`);
    const bytes = new Uint8Array(await response.arrayBuffer());
    if (process.env.KEEP_PDF) fs.writeFileSync(process.env.KEEP_PDF, bytes);
    // ISO 32000-1 §7.5.2: a PDF file begins with a header "%PDF-1.n".
    expect(Buffer.from(bytes.subarray(0, 5)).toString('latin1')).toBe('%PDF-');
    const pdf = await readPdf(bytes);
    const text = pdf.flat;
    expect(text).toContain('Fernhollow Animal Clinic');
    expect(text).toContain(`visit of ${visit}`);
    expect(text).toContain('Biscuit (FH-1001)');
    expect(text).toMatch(/Labrador Retriever/);
    expect(text).toMatch(/Owner/);
    expect(text).toMatch(/<5 mg\/L/); // the latest demo result, as the analyzer gave the limit (no false decimal)
    expect(text).toContain('mg/L');
    expect(text).toContain('up to 10.0'); // the canine interval (no lower limit set)
    expect(text).toMatch(/Trend \(5 results/); // the serial results of the same test
    expect(text).toContain('Not yet reviewed by a veterinarian.');
    expect(text).toContain('never replace');
    expect(pdf.pages).toHaveLength(1);
    expect(text).toContain('Page 1 of 1');
    expect(pdf.info.Title).toBe(`Results for Biscuit (FH-1001), ${visit}`);
  });

  it('a flagged result is marked and a reviewer’s comment and sign-off are printed', async () => {
    // The 4-days-ago demo result (96.4 mg/L) is high and has a comment and a sign-off in the seed.
    const all = (await chart()).results as { id: string; measuredAt: string; value: number }[];
    const high = all.find((x) => x.value === 96.4)!;
    const visit = visitDay(new Date(high.measuredAt), timeZone);
    const response = await pdfRoute.GET(request(`/api/patients/x/report?visit=${visit}`, { cookie: c.vet }), params({ patientId: biscuit }));
    const text = (await readPdf(new Uint8Array(await response.arrayBuffer()))).flat;
    expect(text).toMatch(/96\.4/);
    expect(text).toMatch(/\bH\b/);
    expect(text).toContain('Day 2 after surgery: a rise is expected. Repeat daily.');
    expect(text).toMatch(/Reviewed and signed off by Dr\. Ilse Corvan/);
  });

  it('a day without results is 404 and a malformed date 400', async () => {
    const none = await pdfRoute.GET(request('/api/patients/x/report?visit=2001-01-01', { cookie: c.vet }), params({ patientId: biscuit }));
    expect(none.status).toBe(404);
    const bad = await pdfRoute.GET(request('/api/patients/x/report?visit=yesterday', { cookie: c.vet }), params({ patientId: biscuit }));
    expect(bad.status).toBe(400);
  });
});

describe('a coded or text result on the report', () => {
  it('is printed as sent (never "—"), with A when the analyzer flags it abnormal and the analyzer’s note', async () => {
    // HL7 v2 OBX-5 CE (code^text^system) with OBX-8 A (abnormal) and an NTE comment; OBX-5 ST free text (from memory).
    const juniper = (await patientByRecord(database.db, clinicId, 'FH-1002')).id;
    const measuredAt = new Date().toISOString();
    for (const [key, payload] of [
      ['report-coded-1', { analyte: 'FELV', value: null, unit: null, code: { system: 'L', code: '1', display: 'Positive' }, flags: ['A'], notes: ['Confirm with a second test'], measuredAt, raw: 'OBX|1|CE|FELV||1^Positive^L||||A\r' }],
      ['report-text-1', { analyte: 'UMIC', value: null, unit: null, text: 'Struvite crystals, moderate', measuredAt, raw: 'OBX|1|ST|UMIC||Struvite crystals, moderate\r' }],
    ] as const) {
      const readingId = await ingestOne(bridgeToken, key, payload);
      expect((await assign.POST(request('/api/readings/x/assign', { cookie: c.tech, body: { patientId: juniper } }), params({ readingId }))).status).toBe(200);
    }
    const visit = visitDay(new Date(measuredAt), timeZone);
    const response = await pdfRoute.GET(request(`/api/patients/x/report?visit=${visit}`, { cookie: c.tech }), params({ patientId: juniper }));
    expect(response.status).toBe(200);
    const text = (await readPdf(new Uint8Array(await response.arrayBuffer()))).flat;
    expect(text).toContain('Positive (1)');
    expect(text).toContain('Analyzer flag: A (abnormal)');
    expect(text).toContain('Analyzer note: Confirm with a second test');
    expect(text).toContain('Struvite crystals, moderate');
  });
});

describe('sending a reviewed report', () => {
  it('is refused before every result of the visit is signed off (409), and to a technician (403)', async () => {
    const r = await latest();
    const visitDate = visitDay(new Date(r.measuredAt), timeZone);
    const early = await send({ visitDate, recipientKind: 'referring-vet', recipientEmail: 'referrals@example.org' });
    expect(early.status).toBe(409);
    expect((await body(early)).error.code).toBe('not_reviewed');
    expect((await send({ visitDate, recipientKind: 'referring-vet', recipientEmail: 'referrals@example.org' }, c.tech)).status).toBe(403);
    expect((await send({ visitDate, recipientKind: 'referring-vet' })).status).toBe(400);
  });

  it('after sign-off, is queued, delivered with HTML, text and the PDF, and the chart shows it sent', async () => {
    const r = await latest();
    const signed = await reviews.POST(request('/api/readings/x/reviews', { cookie: c.vet, body: { reviewed: true, comment: 'Back within the interval.' } }), params({ readingId: r.id }));
    expect(signed.status).toBe(201);
    const visitDate = visitDay(new Date(r.measuredAt), timeZone);
    const response = await send({ visitDate, recipientKind: 'referring-vet', recipientEmail: 'Referrals@Example.org', recipientName: 'Dr. Quill', message: 'As discussed.' });
    expect(response.status).toBe(201);
    const { report, mail } = await body(response);
    expect(mail.status).toBe('queued');
    expect(report).toMatchObject({ visitDate, recipientKind: 'referring-vet', recipientEmail: 'referrals@example.org', readingIds: [r.id] });

    let listed = await body(await reportsRoute.GET(request('/api/patients/x/reports', { cookie: c.tech }), params({ patientId: biscuit })));
    expect(listed.reports[0]).toMatchObject({ id: report.id, mailStatus: 'queued' });

    await deliverDueMail({ transport: transportFromEnv({ SMTP_URL: sink.url }) });
    const [received] = await sink.waitForMessages(1);
    expect(received.subject).toBe(`Laboratory results for Biscuit (FH-1001), ${visitDate}`);
    expect(received.text).toContain('Dear Dr. Quill,');
    expect(received.text).toContain('As discussed.');
    expect(received.text).toContain('C-reactive protein (canine): <5 mg/L (interval up to 10.0)');
    expect(received.text).toContain('never replace');
    expect(received.html).toContain('<strong>Biscuit</strong>');
    expect(received.attachments).toHaveLength(1);
    expect(received.attachments[0]).toMatchObject({ filename: `results-FH-1001-${visitDate}.pdf`, contentType: 'application/pdf' });
    const attached = (await readPdf(new Uint8Array(received.attachments[0].content))).flat;
    expect(attached).toContain('Back within the interval.');
    expect(attached).toMatch(/Reviewed and signed off by Dr\. Ilse Corvan/);

    listed = await body(await reportsRoute.GET(request('/api/patients/x/reports', { cookie: c.tech }), params({ patientId: biscuit })));
    expect(listed.reports[0]).toMatchObject({ id: report.id, mailStatus: 'sent', sentByName: 'Dr. Ilse Corvan' });
    const visits = listed.visits as { visitDate: string; results: number; reviewed: number }[];
    expect(visits.find((v) => v.visitDate === visitDate)).toMatchObject({ results: 1, reviewed: 1 });

    const audit = await database.db.select().from(auditEvents).where(eq(auditEvents.entityId, biscuit));
    expect(audit.find((a) => a.action === 'report.sent')?.details).toMatchObject({ reportId: report.id, to: 'referrals@example.org' });
  });
});
