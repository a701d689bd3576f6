/**
 * Tables that flow over pages: rows are measured before they are drawn, a row that would
 * cross the bottom margin starts a new page, and the header (with the caption marked
 * "continued") is drawn again at the top of every page the table reaches.
 */
import { contentBottom, contentLeft, contentTop, contentWidth, ensureSpace, font, palette, type } from './document.ts';

export interface Column {
  header: string;
  /** Share of the table width (the shares are normalised). */
  width: number;
  align?: 'left' | 'right' | 'center';
}

export interface Cell {
  text: string;
  bold?: boolean;
  color?: string;
}

export interface TableSpec {
  columns: Column[];
  rows: (string | Cell)[][];
  /** Shown above the table, and again with "(continued)" on later pages. */
  caption?: string;
  size?: number;
  /** Shade every other row for long tables. */
  zebra?: boolean;
  /** Share of the content width the table takes, from the left margin (default 1). */
  width?: number;
}

const padX = 3.5;
const padY = 2.2;

function cellOf(value: string | Cell): Cell {
  return typeof value === 'string' ? { text: value } : value;
}

export interface TableResult {
  /** Pages the table was drawn on (0-based, as PDFKit buffers them). */
  pages: number[];
}

export function drawTable(doc: PDFKit.PDFDocument, spec: TableSpec): TableResult {
  const size = spec.size ?? type.small;
  const tableWidth = contentWidth * Math.min(1, Math.max(0.2, spec.width ?? 1));
  const total = spec.columns.reduce((s, c) => s + c.width, 0);
  const widths = spec.columns.map((c) => (c.width / total) * tableWidth);
  const lefts: number[] = [];
  widths.reduce((x, w) => (lefts.push(x), x + w), contentLeft);
  const pages: number[] = [];
  const currentPage = () => doc.bufferedPageRange().start + doc.bufferedPageRange().count - 1;

  const measure = (cells: Cell[], bold: boolean): number => {
    let h = 0;
    cells.forEach((cell, i) => {
      doc.font(bold || cell.bold ? font.bold : font.regular).fontSize(size);
      h = Math.max(h, doc.heightOfString(cell.text || ' ', { width: widths[i] - 2 * padX, lineGap: 0 }));
    });
    return h + 2 * padY;
  };

  const headerCells = spec.columns.map((c) => ({ text: c.header }));
  const headerHeight = measure(headerCells, true);
  const captionHeight = spec.caption ? size * 1.5 + 3 : 0;

  const drawRow = (cells: Cell[], y: number, height: number, header: boolean, shade: boolean): void => {
    if (header || shade) {
      doc.save().rect(contentLeft, y, tableWidth, height).fillColor(header ? palette.faint : '#f7f8fa').fill().restore();
    }
    cells.forEach((cell, i) => {
      doc
        .font(header || cell.bold ? font.bold : font.regular)
        .fontSize(size)
        .fillColor(cell.color ?? (header ? palette.text : palette.text));
      doc.text(cell.text, lefts[i] + padX, y + padY, { width: widths[i] - 2 * padX, align: spec.columns[i].align ?? 'left', lineGap: 0 });
    });
  };

  const rule = (y: number, weight: number, color: string = palette.rule) => {
    doc.save().moveTo(contentLeft, y).lineTo(contentLeft + tableWidth, y).lineWidth(weight).strokeColor(color).stroke().restore();
  };

  const startPage = (continued: boolean): number => {
    let y = doc.y;
    if (spec.caption) {
      doc.font(font.bold).fontSize(size + 0.6).fillColor(palette.text);
      doc.text(continued ? `${spec.caption} (continued)` : spec.caption, contentLeft, y, { width: contentWidth, lineBreak: false });
      y += captionHeight;
    }
    rule(y, 0.8, palette.text);
    drawRow(headerCells, y, headerHeight, true, false);
    y += headerHeight;
    rule(y, 0.6, palette.text);
    pages.push(currentPage());
    return y;
  };

  const firstRow = spec.rows.length > 0 ? measure(spec.rows[0].map(cellOf), false) : 0;
  ensureSpace(doc, captionHeight + headerHeight + firstRow + 4);
  let y = startPage(false);
  spec.rows.forEach((raw, r) => {
    const cells = raw.map(cellOf);
    const height = measure(cells, false);
    if (y + height > contentBottom) {
      doc.addPage();
      doc.y = contentTop;
      y = startPage(true);
    }
    drawRow(cells, y, height, false, Boolean(spec.zebra) && r % 2 === 1);
    y += height;
  });
  rule(y, 0.8, palette.text);
  doc.x = contentLeft;
  doc.y = y + 6;
  doc.font(font.regular).fontSize(type.body).fillColor(palette.text);
  return { pages };
}
