/**
 * Tables that flow over pages: rows are measured before they are drawn, a row that would
 * cross the bottom margin starts a new page, and the header (with the caption marked
 * "continued") is drawn again at the top of every page the table reaches. A table's note
 * (`footnote`) is drawn under it and never alone: when the note does not fit under the last
 * rows, those rows go to the next page with it.
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
  /** A note that belongs to the table, drawn under it and kept on a page with its last rows. */
  footnote?: string;
}

/** Rows that go to a new page with the footnote rather than leave it alone on one. */
const rowsKeptWithNote = 2;

const padX = 3.5;
const padY = 2.2;

function cellOf(value: string | Cell): Cell {
  return typeof value === 'string' ? { text: value } : value;
}

export interface TableResult {
  /** Pages the table was drawn on (0-based, as PDFKit buffers them). */
  pages: number[];
  /** Page of the last row, and of the footnote when there is one (0-based). */
  lastRowPage: number;
  footnotePage: number | null;
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

  const noteGap = 6;
  const footnoteHeight = spec.footnote ? (doc.font(font.regular).fontSize(type.small), doc.heightOfString(spec.footnote, { width: contentWidth, lineGap: 1 }) + noteGap) : 0;
  const heights = spec.rows.map((raw) => measure(raw.map(cellOf), false));
  // Height from row r to the end of the table, note included, for the rows kept with the note.
  const tail = (r: number): number => heights.slice(r).reduce((a, b) => a + b, 0) + footnoteHeight;
  const keepFrom = spec.footnote ? Math.max(0, spec.rows.length - rowsKeptWithNote) : spec.rows.length;
  const firstRow = spec.rows.length === 0 ? footnoteHeight : keepFrom === 0 ? tail(0) : heights[0];
  ensureSpace(doc, captionHeight + headerHeight + firstRow + 4);
  let y = startPage(false);
  let rowsOnPage = 0;
  spec.rows.forEach((raw, r) => {
    const cells = raw.map(cellOf);
    const height = heights[r];
    const needed = r === keepFrom && rowsOnPage > 0 ? tail(r) : height;
    if (y + needed > contentBottom) {
      doc.addPage();
      doc.y = contentTop;
      y = startPage(true);
      rowsOnPage = 0;
    }
    drawRow(cells, y, height, false, Boolean(spec.zebra) && r % 2 === 1);
    y += height;
    rowsOnPage++;
  });
  rule(y, 0.8, palette.text);
  const lastRowPage = currentPage();
  doc.x = contentLeft;
  doc.y = y + noteGap;
  let footnotePage: number | null = null;
  if (spec.footnote) {
    doc.font(font.regular).fontSize(type.small).fillColor(palette.muted);
    doc.text(spec.footnote, contentLeft, doc.y, { width: contentWidth, lineGap: 1 });
    footnotePage = currentPage();
    doc.y += 4;
  }
  doc.font(font.regular).fontSize(type.body).fillColor(palette.text);
  return { pages, lastRowPage, footnotePage };
}
