/**
 * What frames the report: the title block (scenario title, run time, Tidemark's version,
 * the scenario's fingerprint), the boxed caution on the first page, and — written after
 * layout, once the page count is known — a running header and a footer on every page with
 * the short caution and "page N of M".
 */
import { contentLeft, contentWidth, font, geometry, keyValues, palette, type } from './document.ts';

/** The caution in plain words, boxed on the first page before any figure. */
export const cautionParagraphs = [
  'This report shows a model simulation, produced for review. It is not dosing advice.',
  'The results are only as good as the model and the parameters that were entered: a wrong volume, clearance or dose gives wrong curves and figures, however precise the arithmetic.',
  'Dosing decisions belong to qualified clinicians, working under local protocols, the product labelling and applicable regulations.',
];

/** The short caution in every page footer. */
export const footerCaution = 'Model simulation for review — not dosing advice.';

export interface TitleBlock {
  title: string;
  description: string | null;
  runAt: string;
  version: string;
  fingerprint: string;
  reference: { title: string; fingerprint: string } | null;
  /** The stored version this report was issued for, when it came from the store. */
  stored?: { name: string; id: number; version: number; by: string } | null;
}

export function drawTitleBlock(doc: PDFKit.PDFDocument, block: TitleBlock): void {
  doc.font(font.regular).fontSize(type.small).fillColor(palette.accent);
  doc.text('Tidemark · concentration report', contentLeft, doc.y);
  doc.moveDown(0.25);
  doc.font(font.bold).fontSize(type.title).fillColor(palette.text);
  doc.text(block.title, contentLeft, doc.y, { width: contentWidth });
  doc.moveDown(0.2);
  if (block.description) {
    doc.font(font.italic).fontSize(type.body).fillColor(palette.muted);
    doc.text(block.description, contentLeft, doc.y, { width: contentWidth });
    doc.moveDown(0.4);
  }
  const rows: [string, string][] = [
    ['Run', block.runAt],
    ['Tidemark version', block.version],
    ['Scenario fingerprint', `${block.fingerprint}  (first 12 hex digits of SHA-256 of the scenario's JSON with keys sorted)`],
  ];
  if (block.stored) {
    const s = block.stored;
    // Names are kept exactly as typed; on paper a control character would only break the line.
    const printable = (t: string) => t.replace(/[\u0000-\u001f\u007f]/g, ' ');
    rows.push(['Stored as', `“${printable(s.name)}”, scenario ${s.id} version ${s.version} in the Tidemark store${s.by ? `; issued to ${printable(s.by)}` : ''}`]);
  }
  if (block.reference) rows.push(['Reference scenario', `${block.reference.title} — fingerprint ${block.reference.fingerprint}; drawn dashed`]);
  keyValues(doc, rows, 108, type.small + 0.4);
  doc.moveDown(0.4);
}

export function drawCautionBox(doc: PDFKit.PDFDocument): void {
  const pad = 8;
  const innerWidth = contentWidth - 2 * pad - 6;
  doc.font(font.bold).fontSize(type.body);
  const headHeight = doc.heightOfString('Caution', { width: innerWidth }) + 2;
  doc.font(font.regular).fontSize(type.body);
  const bodyHeights = cautionParagraphs.map((p) => doc.heightOfString(p, { width: innerWidth, lineGap: 0.5 }) + 2.5);
  const height = pad * 2 + headHeight + bodyHeights.reduce((s, h) => s + h, 0);
  const top = doc.y;
  doc.save().rect(contentLeft, top, contentWidth, height).fillColor(palette.cautionFill).fill().restore();
  doc.save().rect(contentLeft, top, contentWidth, height).lineWidth(1.1).strokeColor(palette.caution).stroke().restore();
  doc.save().rect(contentLeft, top, 4, height).fillColor(palette.caution).fill().restore();
  let y = top + pad;
  doc.font(font.bold).fontSize(type.body).fillColor(palette.caution);
  doc.text('Caution', contentLeft + pad + 6, y, { width: innerWidth });
  y += headHeight;
  doc.font(font.regular).fontSize(type.body).fillColor(palette.text);
  cautionParagraphs.forEach((p, i) => {
    doc.text(p, contentLeft + pad + 6, y, { width: innerWidth, lineGap: 0.5 });
    y += bodyHeights[i];
  });
  doc.x = contentLeft;
  doc.y = top + height + 8;
}

/** Writes the running header and the footer on every buffered page. Call once, after all content. */
export function stampPages(doc: PDFKit.PDFDocument, meta: { title: string; fingerprint: string; version: string }): void {
  const range = doc.bufferedPageRange();
  const total = range.count;
  for (let i = range.start; i < range.start + total; i++) {
    doc.switchToPage(i);
    // Writing inside the bottom margin must not start a new page.
    const bottom = doc.page.margins.bottom;
    doc.page.margins.bottom = 0;
    const n = i - range.start + 1;
    if (n > 1) {
      doc.font(font.regular).fontSize(type.tiny).fillColor(palette.muted);
      const right = `fingerprint ${meta.fingerprint}`;
      const rightWidth = doc.widthOfString(right);
      doc.text(right, contentLeft + contentWidth - rightWidth, geometry.headerY, { lineBreak: false });
      let title = meta.title;
      while (title.length > 4 && doc.widthOfString(`${title}…`) > contentWidth - rightWidth - 20) title = title.slice(0, -1);
      doc.text(title === meta.title ? title : `${title}…`, contentLeft, geometry.headerY, { lineBreak: false });
      doc.save().moveTo(contentLeft, geometry.headerY + 11).lineTo(contentLeft + contentWidth, geometry.headerY + 11).lineWidth(0.4).strokeColor(palette.rule).stroke().restore();
    }
    const y = geometry.footerY;
    doc.save().moveTo(contentLeft, y - 5).lineTo(contentLeft + contentWidth, y - 5).lineWidth(0.4).strokeColor(palette.rule).stroke().restore();
    doc.font(font.bold).fontSize(type.tiny).fillColor(palette.caution);
    doc.text(footerCaution, contentLeft, y, { lineBreak: false });
    const pageText = `page ${n} of ${total}`;
    doc.font(font.regular).fontSize(type.tiny).fillColor(palette.text);
    doc.text(pageText, contentLeft + contentWidth - doc.widthOfString(pageText), y, { lineBreak: false });
    doc.font(font.regular).fontSize(type.tiny).fillColor(palette.muted);
    doc.text(`Only as good as the parameters entered. Tidemark ${meta.version}.`, contentLeft, y + 9, { lineBreak: false });
    doc.page.margins.bottom = bottom;
  }
}
