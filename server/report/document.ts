/**
 * The report's page and type: an A4 document with the embedded DejaVu Sans faces (so µ, τ
 * and ½ print and extract as text), the page geometry every drawing shares, and the
 * flowing-layout helpers (headings, paragraphs, keeping a block on one page).
 */
import PDFDocument from 'pdfkit';
import { fontBytes } from './font-file.ts';

/** Font names registered on every report document. */
export const font = {
  regular: 'Body',
  bold: 'Body-Bold',
  italic: 'Body-Italic',
} as const;

/** A4 portrait in points, with room above and below the margins for the running header and footer. */
export const geometry = {
  width: 595.28,
  height: 841.89,
  margin: { top: 58, bottom: 62, left: 50, right: 50 },
  /** Baseline area of the running header and footer, outside the margins. */
  headerY: 26,
  footerY: 841.89 - 46,
} as const;

export const contentLeft = geometry.margin.left;
export const contentWidth = geometry.width - geometry.margin.left - geometry.margin.right;
export const contentRight = contentLeft + contentWidth;
/** Lowest y a flowing block may reach. */
export const contentBottom = geometry.height - geometry.margin.bottom;
export const contentTop = geometry.margin.top;

export const palette = {
  text: '#1b1f24',
  muted: '#5b6470',
  rule: '#b9c0c8',
  faint: '#eef1f4',
  accent: '#1d5c8c',
  caution: '#8a4b00',
  cautionFill: '#fff6e5',
  window: '#d9efdd',
  windowEdge: '#5c9c6a',
  warning: '#9b1c1c',
  /** Series colours: distinguishable in print and for common colour-vision deficiencies. */
  series: ['#1d5c8c', '#c2571a', '#3d8b3d', '#7b4fa0', '#a0522d', '#2a8c8c', '#b03a6e', '#5a5a5a'],
} as const;

export const type = {
  title: 17,
  h1: 12.5,
  h2: 10.5,
  body: 9,
  small: 7.8,
  tiny: 7,
} as const;

export interface DocumentInfo {
  title: string;
  subject: string;
  author: string;
  keywords: string;
  created: Date;
}

export function createReportDocument(info: DocumentInfo): PDFKit.PDFDocument {
  const doc = new PDFDocument({
    size: 'A4',
    margins: { ...geometry.margin },
    bufferPages: true,
    // No default font: the standard Helvetica is never loaded, and the registered faces are
    // then cached by their names (a default face of the same family defeats PDFKit's cache).
    font: null as unknown as string,
    pdfVersion: '1.7',
    displayTitle: true,
    lang: 'en',
    info: {
      Title: info.title,
      Subject: info.subject,
      Author: info.author,
      Creator: info.author,
      Producer: `${info.author} (PDFKit)`,
      Keywords: info.keywords,
      CreationDate: info.created,
      ModDate: info.created,
    },
  } as PDFKit.PDFDocumentOptions);
  doc.registerFont(font.regular, fontBytes('400-normal'));
  doc.registerFont(font.bold, fontBytes('700-normal'));
  doc.registerFont(font.italic, fontBytes('400-italic'));
  doc.font(font.regular).fontSize(type.body).fillColor(palette.text);
  return doc;
}

/** The finished document's bytes. PDFKit pushes every chunk synchronously, so after end() they are all buffered. */
export function documentBytes(doc: PDFKit.PDFDocument): Uint8Array {
  doc.end();
  const chunks: Buffer[] = [];
  for (let chunk = doc.read() as Buffer | null; chunk !== null; chunk = doc.read() as Buffer | null) chunks.push(chunk);
  const bytes = Buffer.concat(chunks);
  if (!bytes.subarray(Math.max(0, bytes.length - 16)).toString('latin1').includes('%%EOF')) {
    throw new Error('the PDF writer did not finish the document');
  }
  return new Uint8Array(bytes.buffer, bytes.byteOffset, bytes.byteLength);
}

/** Starts a new page when fewer than `height` points remain; the cursor is left at the top margin. */
export function ensureSpace(doc: PDFKit.PDFDocument, height: number): void {
  if (doc.y + height > contentBottom) {
    doc.addPage();
    doc.x = contentLeft;
    doc.y = contentTop;
  }
}

export function gap(doc: PDFKit.PDFDocument, points: number): void {
  doc.y += points;
}

/** A numbered section heading, kept on a page with at least `keep` points after it. */
export function heading(doc: PDFKit.PDFDocument, text: string, level: 1 | 2 = 1, keep = 60): void {
  const size = level === 1 ? type.h1 : type.h2;
  ensureSpace(doc, size * 1.6 + keep);
  gap(doc, level === 1 ? 8 : 4);
  doc.font(font.bold).fontSize(size).fillColor(level === 1 ? palette.accent : palette.text);
  doc.text(text, contentLeft, doc.y, { width: contentWidth });
  if (level === 1) {
    const y = doc.y + 1;
    doc.save().moveTo(contentLeft, y).lineTo(contentRight, y).lineWidth(0.6).strokeColor(palette.rule).stroke().restore();
    gap(doc, 5);
  } else gap(doc, 2);
  doc.font(font.regular).fontSize(type.body).fillColor(palette.text);
}

export interface ParagraphOptions {
  size?: number;
  color?: string;
  face?: string;
  indent?: number;
  after?: number;
}

/** Flowing text across the content width; PDFKit breaks it onto the next page when it runs over. */
export function paragraph(doc: PDFKit.PDFDocument, text: string, options: ParagraphOptions = {}): void {
  const indent = options.indent ?? 0;
  doc.font(options.face ?? font.regular).fontSize(options.size ?? type.body);
  const height = doc.heightOfString(text, { width: contentWidth - indent });
  // Short paragraphs stay whole; long ones may flow over a page break.
  if (height < 120) ensureSpace(doc, height);
  // The colour after the break: a new page's furniture sets its own, so it is chosen last.
  doc.font(options.face ?? font.regular).fontSize(options.size ?? type.body).fillColor(options.color ?? palette.text);
  doc.text(text, contentLeft + indent, doc.y, { width: contentWidth - indent, lineGap: 1 });
  gap(doc, options.after ?? 3);
  doc.font(font.regular).fontSize(type.body).fillColor(palette.text);
}

/** Label–value lines ("Fingerprint  3f2a…"), the label in the muted colour. */
export function keyValues(doc: PDFKit.PDFDocument, rows: [string, string][], labelWidth = 118, size: number = type.body): void {
  for (const [label, value] of rows) {
    doc.font(font.regular).fontSize(size);
    const h = Math.max(doc.heightOfString(value, { width: contentWidth - labelWidth }), doc.heightOfString(label, { width: labelWidth - 6 }));
    ensureSpace(doc, h);
    const y = doc.y;
    doc.fillColor(palette.muted).text(label, contentLeft, y, { width: labelWidth - 6 });
    doc.fillColor(palette.text).text(value, contentLeft + labelWidth, y, { width: contentWidth - labelWidth, lineGap: 0.5 });
    doc.y = y + h + 1.5;
  }
  doc.x = contentLeft;
}
