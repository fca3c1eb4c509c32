import 'server-only';
import fs from 'node:fs';
import path from 'node:path';
import PDFDocument from 'pdfkit';
import { CLINICAL_CAUTION_TEXT, sexLabel, speciesLabel } from '@/lib/format';
import type { ReportData, ReportResult } from './data';
import { woffToSfnt } from './woff';

// The result report as a PDF (pdfkit) in IBM Plex Mono, a font the app already ships (@fontsource).
// Its WOFF 1.0 files are unwrapped to plain TrueType first: pdfkit's font subsetter fails on the WOFF and
// WOFF2 files as shipped, and Inter ships only as a variable WOFF2, which it cannot subset either.
// The Latin subset has no ≤ ≥ glyphs, so the report writes intervals in words.

const plexDir = () => path.join(/*turbopackIgnore: true*/ process.cwd(), 'node_modules', '@fontsource', 'ibm-plex-mono', 'files');
let fonts: { regular: Buffer; bold: Buffer } | null = null;
function reportFonts() {
  fonts ??= {
    regular: woffToSfnt(fs.readFileSync(path.join(plexDir(), 'ibm-plex-mono-latin-400-normal.woff'))),
    bold: woffToSfnt(fs.readFileSync(path.join(plexDir(), 'ibm-plex-mono-latin-600-normal.woff'))),
  };
  return fonts;
}

const INK = '#13283a';
const MUTED = '#4d7391';
const ALARM = '#a52a2a';
const RULE = '#c9d6e0';

export function formatInZone(at: Date, timeZone: string): string {
  return new Intl.DateTimeFormat('en-GB', { timeZone, dateStyle: 'medium', timeStyle: 'short' }).format(at);
}

/** Renders the report; resolves to the PDF's bytes. */
export function renderReportPdf(data: ReportData): Promise<Buffer> {
  const doc = new PDFDocument({
    size: 'A4',
    margins: { top: 56, bottom: 64, left: 50, right: 50 },
    bufferPages: true,
    info: {
      Title: `Results for ${data.patient.name} (${data.patient.recordNumber}), ${data.visitDate}`,
      Author: data.clinic.name,
      Subject: 'Veterinary laboratory results',
      Creator: 'Benchwire',
    },
  });
  const chunks: Buffer[] = [];
  doc.on('data', (c: Buffer) => chunks.push(c));
  const done = new Promise<Buffer>((resolve, reject) => {
    doc.on('end', () => resolve(Buffer.concat(chunks)));
    doc.on('error', reject);
  });
  const { regular, bold } = reportFonts();
  doc.registerFont('text', regular);
  doc.registerFont('mono', regular);
  doc.registerFont('mono-bold', bold);
  doc.registerFont('heading', bold);
  const left = doc.page.margins.left;
  const width = doc.page.width - left - doc.page.margins.right;
  const tz = data.clinic.timeZone;

  // Header: clinic, title, patient and owner.
  doc.font('heading').fontSize(15).fillColor(INK).text(data.clinic.name, left, doc.page.margins.top);
  doc.fontSize(11).fillColor(MUTED).text(`Laboratory results · visit of ${data.visitDate}`);
  doc.moveDown(0.6);
  rule(doc, left, width);
  const p = data.patient;
  const facts: [string, string][] = [
    ['Patient', `${p.name} (${p.recordNumber})`],
    ['Species / breed', `${speciesLabel[p.species] ?? p.species}${p.breed ? `, ${p.breed}` : ''}`],
    ['Sex', sexLabel[p.sex] ?? p.sex],
    ['Born', p.dateOfBirth ?? 'unknown'],
    ['Weight', p.weightKg ? `${p.weightKg} kg` : 'not recorded'],
    ['Owner', [p.ownerName, p.ownerPhone].filter(Boolean).join(', ') || 'not recorded'],
    ['Attending veterinarian', p.attendingVetName ?? 'not recorded'],
  ];
  doc.moveDown(0.4);
  for (const [label, value] of facts) {
    const y = doc.y;
    doc.font('text').fontSize(9).fillColor(MUTED).text(label, left, y, { width: 140 });
    doc.fillColor(INK).fontSize(10).text(value, left + 145, y, { width: width - 145 });
    doc.moveDown(0.15);
  }
  doc.moveDown(0.5);
  rule(doc, left, width);
  doc.moveDown(0.5);

  // Results table.
  const cols = { test: left, value: left + 140, unit: left + 215, interval: left + 275, flag: left + 360, at: left + 392 };
  const header = () => {
    const y = doc.y;
    doc.font('text').fontSize(8).fillColor(MUTED);
    doc.text('TEST', cols.test, y);
    doc.text('RESULT', cols.value, y);
    doc.text('UNIT', cols.unit, y);
    doc.text('INTERVAL', cols.interval, y);
    doc.text('FLAG', cols.flag, y);
    doc.text('MEASURED', cols.at, y);
    doc.moveDown(0.3);
  };
  doc.font('heading').fontSize(11).fillColor(INK).text('Results', left);
  doc.moveDown(0.3);
  header();
  for (const r of data.results) {
    ensureSpace(doc, 120, header);
    resultBlock(doc, r, cols, left, width, tz);
  }
  if (!data.reviewed) {
    doc.moveDown(0.5);
    doc.font('text').fontSize(10).fillColor(ALARM).text('Not every result on this report has been signed off by a veterinarian yet.', left, doc.y, { width });
  }

  // Cautions at the end of the report.
  ensureSpace(doc, 80);
  doc.moveDown(1);
  rule(doc, left, width);
  doc.moveDown(0.4);
  doc.font('text').fontSize(8.5).fillColor(MUTED).text(CLINICAL_CAUTION_TEXT, left, doc.y, { width });
  doc.moveDown(0.3);
  doc.text(
    'Intervals are the clinic’s reference intervals for the species at the time of printing. Flags: L/H below/above the interval, LL/HH beyond the critical limit, ? where the reported value allows more than one flag; for a coded or text result, A abnormal and N normal, by the analyzer’s flag or the clinic’s rule.',
    left,
    doc.y,
    { width },
  );

  // Page numbers and a footer on every page.
  const range = doc.bufferedPageRange();
  for (let i = range.start; i < range.start + range.count; i++) {
    doc.switchToPage(i);
    // Writing below the bottom margin would start a new page: lift the margin while writing the footer.
    const margin = doc.page.margins.bottom;
    doc.page.margins.bottom = 0;
    const bottom = doc.page.height - margin + 20;
    doc.font('text').fontSize(8).fillColor(MUTED);
    doc.text(`${p.name} (${p.recordNumber}) · ${data.visitDate} · printed ${formatInZone(data.generatedAt, tz)}`, left, bottom, { width: width - 80, lineBreak: false });
    doc.text(`Page ${i - range.start + 1} of ${range.count}`, left + width - 80, bottom, { width: 80, align: 'right', lineBreak: false });
    doc.page.margins.bottom = margin;
  }
  doc.end();
  return done;
}

function rule(doc: PDFKit.PDFDocument, left: number, width: number) {
  doc.moveTo(left, doc.y).lineTo(left + width, doc.y).lineWidth(0.5).strokeColor(RULE).stroke();
}

function ensureSpace(doc: PDFKit.PDFDocument, needed: number, onNewPage?: () => void) {
  if (doc.y + needed > doc.page.height - doc.page.margins.bottom) {
    doc.addPage();
    onNewPage?.();
  }
}

function resultBlock(
  doc: PDFKit.PDFDocument,
  r: ReportResult,
  cols: Record<'test' | 'value' | 'unit' | 'interval' | 'flag' | 'at', number>,
  left: number,
  width: number,
  tz: string,
) {
  const y = doc.y;
  const abnormal = r.flag !== null && r.flag !== 'N';
  doc.font('text').fontSize(9).fillColor(INK).text(r.name === r.analyte ? r.analyte : `${r.name} (${r.analyte})`, cols.test, y, { width: 135 });
  const afterName = doc.y;
  doc.font(abnormal ? 'mono-bold' : 'mono').fontSize(9).fillColor(abnormal ? ALARM : INK).text(r.value, cols.value, y, { width: 72 });
  doc.font('mono').fillColor(INK).text(r.unit ?? '', cols.unit, y, { width: 58 });
  doc.text(r.interval, cols.interval, y, { width: 83 });
  doc.font(abnormal ? 'mono-bold' : 'mono').fillColor(abnormal ? ALARM : INK).text(r.flag ?? '—', cols.flag, y, { width: 32 });
  doc.font('text').fontSize(8).fillColor(INK).text(formatInZone(r.measuredAt, tz), cols.at, y, { width: left + width - cols.at });
  doc.y = Math.max(afterName, doc.y);
  const indent = cols.test + 10;
  const lineWidth = width - 10;
  const note = (text: string, color = MUTED) => {
    doc.font('text').fontSize(8.5).fillColor(color).text(text, indent, doc.y, { width: lineWidth });
  };
  if (r.flagText && abnormal) note(r.flagText, ALARM);
  if (r.status && r.status !== 'final') note(`Instrument status: ${r.status} (not a final result).`, ALARM);
  if (r.speciesWarning) note(r.speciesWarning, ALARM);
  for (const n of r.notes) note(`Analyzer note: ${n}`, INK);
  if (r.instrument) note(`Instrument: ${r.instrument}`);
  if (r.trend.length > 1) trend(doc, r, indent, lineWidth, tz);
  for (const c of r.comments) note(`Comment by ${c.by}, ${formatInZone(c.at, tz)}: ${c.comment}`, INK);
  note(r.reviewedBy ? `Reviewed and signed off by ${r.reviewedBy}, ${formatInZone(r.reviewedAt!, tz)}.` : 'Not yet reviewed by a veterinarian.', r.reviewedBy ? INK : ALARM);
  doc.moveDown(0.6);
}

/** Serial results of the same test: a small line chart and the values under it. */
function trend(doc: PDFKit.PDFDocument, r: ReportResult, x: number, width: number, tz: string) {
  const points = r.trend.filter((t) => t.value !== null) as { at: Date; value: number; text: string }[];
  doc.font('text').fontSize(8.5).fillColor(MUTED).text(`Trend (${r.trend.length} results, oldest first):`, x, doc.y, { width });
  const top = doc.y + 2;
  const h = 34;
  const w = Math.min(220, width);
  if (points.length > 1) {
    const min = Math.min(...points.map((p) => p.value));
    const max = Math.max(...points.map((p) => p.value));
    const span = max - min || 1;
    const px = (i: number) => x + (i / (points.length - 1)) * w;
    const py = (v: number) => top + h - ((v - min) / span) * h;
    doc.rect(x, top, w, h).lineWidth(0.3).strokeColor(RULE).stroke();
    doc.moveTo(px(0), py(points[0].value));
    points.slice(1).forEach((p, i) => doc.lineTo(px(i + 1), py(p.value)));
    doc.lineWidth(1).strokeColor(INK).stroke();
    points.forEach((p, i) => doc.circle(px(i), py(p.value), 1.6).fillColor(INK).fill());
  }
  doc.y = top + h + 4;
  const series = r.trend.map((t) => `${new Intl.DateTimeFormat('en-GB', { timeZone: tz, day: '2-digit', month: 'short' }).format(t.at)} ${t.text}`).join('  ·  ');
  doc.font('mono').fontSize(8).fillColor(INK).text(series, x, doc.y, { width });
}
