/**
 * The words the sections on measured levels add around their tables: a section's own caution,
 * boxed like the report's caution on page 1 (used where figures could be taken for advice —
 * fitted individual estimates, regimen proposals), and bulleted notes and flags.
 */
import { contentLeft, contentWidth, ensureSpace, font, palette, paragraph, type } from './document.ts';

/**
 * A bulleted line in small type. The page break, when one is needed, is taken before the colour
 * is set: a page PDFKit adds inside a text call starts in black, which turned a muted note black.
 */
export function bullet(doc: PDFKit.PDFDocument, text: string, color: string = palette.text): void {
  doc.font(font.regular).fontSize(type.small);
  const height = doc.heightOfString(`• ${text}`, { width: contentWidth - 4, lineGap: 1 });
  ensureSpace(doc, height + 1);
  paragraph(doc, `• ${text}`, { size: type.small, color, indent: 4, after: 1 });
}

export function drawSectionCaution(doc: PDFKit.PDFDocument, head: string, lines: readonly string[]): void {
  const pad = 8;
  const innerWidth = contentWidth - 2 * pad - 6;
  doc.font(font.bold).fontSize(type.body);
  const headHeight = doc.heightOfString(head, { width: innerWidth }) + 2;
  doc.font(font.regular).fontSize(type.body);
  const heights = lines.map((p) => doc.heightOfString(p, { width: innerWidth, lineGap: 0.5 }) + 2.5);
  const height = 2 * pad + headHeight + heights.reduce((a, b) => a + b, 0);
  ensureSpace(doc, height + 8);
  const top = doc.y;
  doc.save().rect(contentLeft, top, contentWidth, height).fillColor(palette.cautionFill).fill().restore();
  doc.save().rect(contentLeft, top, contentWidth, height).lineWidth(1.1).strokeColor(palette.caution).stroke().restore();
  doc.save().rect(contentLeft, top, 4, height).fillColor(palette.caution).fill().restore();
  let y = top + pad;
  doc.font(font.bold).fontSize(type.body).fillColor(palette.caution).text(head, contentLeft + pad + 6, y, { width: innerWidth });
  y += headHeight;
  doc.font(font.regular).fontSize(type.body).fillColor(palette.text);
  lines.forEach((p, i) => {
    doc.text(p, contentLeft + pad + 6, y, { width: innerWidth, lineGap: 0.5 });
    y += heights[i];
  });
  doc.x = contentLeft;
  doc.y = top + height + 8;
}
