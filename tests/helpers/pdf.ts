// Reads a PDF back with Mozilla's PDF.js (pdfjs-dist), an independent reader, so report tests check what
// a PDF viewer would show rather than what our own renderer meant to write.
import { getDocument } from 'pdfjs-dist/legacy/build/pdf.mjs';

export interface PdfText {
  pages: string[];
  /** All pages' text with line breaks as spaces (wrapped sentences read whole). */
  flat: string;
  info: Record<string, unknown>;
}

export async function readPdf(bytes: Uint8Array): Promise<PdfText> {
  const doc = await getDocument({ data: new Uint8Array(bytes), useSystemFonts: false, isEvalSupported: false }).promise;
  const pages: string[] = [];
  for (let i = 1; i <= doc.numPages; i++) {
    const page = await doc.getPage(i);
    const content = await page.getTextContent();
    pages.push(
      content.items
        .map((item) => ('str' in item ? item.str + (item.hasEOL ? '\n' : ' ') : ''))
        .join('')
        .replace(/[ \t]+/g, ' '),
    );
  }
  const meta = await doc.getMetadata();
  await doc.destroy();
  return { pages, flat: pages.join(' ').replace(/\s+/g, ' '), info: (meta.info ?? {}) as Record<string, unknown> };
}
